#!/usr/bin/python3
"""Hostile results files and inputs through the command line (issue 12): whatever a
file holds, `show` and `run --resume` print one line, exit 2 and never crash, hang or
print HDF5's own error stack; texts from a file reach the terminal with their control
bytes escaped.

  - an attribute stored as an array where one value belongs (schema_version of 4096
    elements, a run's max_energy_error or steps): refused, not read past its end
    (under the sanitizer build, which CI runs this with, a crash is a failure);
  - a text where a number belongs, a number where a text belongs;
  - /summary claiming more rows than n_runs_written or than a suite can have, or
    holding one run id twice;
  - a FIFO and a device given as the results file (must not block);
  - a damaged HDF5 header: our one line only;
  - /summary's datatype with a member's offset past the end of its row;
  - a run_id, reason and suite_source holding an escape sequence and a newline;
  - /tables (a suite's own tables) not a group, a table not a group, an attribute of
    the wrong shape or type, a table name holding an escape sequence.

Hostile files are made with h5py from a small valid file the built driftmark writes.

usage: check_hostile_files.py PATH/TO/driftmark     (CTest passes the built executable)
"""
import os
import shutil
import subprocess
import sys
import tempfile

import h5py
import numpy as np

EXE = os.path.abspath(sys.argv[1])
failures = []


def check(cond, what):
    if not cond:
        failures.append(what)
        print("FAIL:", what)
    return cond


def run(args, cwd, timeout=60, env=None):
    return subprocess.run([EXE] + args, cwd=cwd, capture_output=True, text=True,
                          timeout=timeout, env=env)


# HDF5 1.10 keeps one block of its own (56 bytes, allocated inside libhdf5) after an
# H5Fopen of a damaged file fails: in the sanitizer build, LeakSanitizer would report
# it at exit. Those runs alone go without the leak check; every other check stays.
NO_LEAK_CHECK = dict(os.environ, ASAN_OPTIONS=":".join(
    [o for o in os.environ.get("ASAN_OPTIONS", "").split(":") if o and
     not o.startswith("detect_leaks")] + ["detect_leaks=0"]))


SUITE = """name: tiny
horizon: {periods: 3}
samples: 8
problems:
  - {problem: harmonic}
methods:
  - {method: verlet, steps_per_period: [16, 32]}
"""


def refused(cwd, args, label, needle=None, env=None):
    """One line on stderr, exit 2, no HDF5 stack, nothing on stdout."""
    try:
        r = run(args, cwd, timeout=20, env=env)
    except subprocess.TimeoutExpired:
        check(False, f"{label}: hangs")
        return
    check(r.returncode == 2, f"{label}: exit {r.returncode} (expected 2): {r.stderr!r}")
    check(r.stderr.endswith("\n") and r.stderr.count("\n") == 1,
          f"{label}: not one line: {r.stderr!r}")
    check("HDF5-DIAG" not in r.stderr and "#000" not in r.stderr,
          f"{label}: HDF5's own error stack printed")
    check("\x1b" not in r.stderr, f"{label}: a raw escape byte on stderr")
    if needle is not None:
        check(needle in r.stderr, f"{label}: {needle!r} not in {r.stderr!r}")


def hostile(base, name, edit):
    path = os.path.join(os.path.dirname(base), name)
    shutil.copy(base, path)
    with h5py.File(path, "r+") as f:
        edit(f)
    return name


def first_run(f):
    return f["runs"][sorted(f["runs"].keys())[0]]


def replace_attr(obj, name, value):
    del obj.attrs[name]
    obj.attrs[name] = value


def main():
    with tempfile.TemporaryDirectory() as tmp:
        with open(os.path.join(tmp, "s.yaml"), "w") as f:
            f.write(SUITE)
        r = run(["run", "s.yaml", "-o", "good.h5"], tmp)
        if not check(r.returncode == 0, f"the small suite runs: {r.stderr}"):
            return
        base = os.path.join(tmp, "good.h5")

        # arrays where one value belongs (ASan: stack- and heap-buffer-overflow before)
        cases = [
            ("schema-array.h5", lambda f: replace_attr(f, "schema_version",
                                                       np.arange(4096, dtype="i4"))),
            ("energy-array.h5", lambda f: replace_attr(first_run(f), "max_energy_error",
                                                       np.zeros(4096))),
            ("steps-array.h5", lambda f: replace_attr(first_run(f), "steps",
                                                      np.zeros(4096, dtype="u8"))),
            ("steps-text.h5", lambda f: replace_attr(first_run(f), "steps", "many")),
            ("status-number.h5", lambda f: replace_attr(first_run(f), "status", 3.5)),
            ("status-array.h5", lambda f: replace_attr(first_run(f), "status",
                                                       np.array([b"ok"] * 4096))),
            ("suite-text-array.h5", lambda f: replace_attr(f, "suite_text",
                                                           np.array([b"x"] * 4096))),
            ("written-array.h5", lambda f: replace_attr(f, "n_runs_written",
                                                        np.arange(4096, dtype="u8"))),
            # a status the reader does not know was run again under "running 0"
            ("status-unknown.h5", lambda f: replace_attr(first_run(f), "status", "weird")),
            # no driftmark writes a schema below 1: show, choose and compare read it
            ("schema-negative.h5", lambda f: replace_attr(f, "schema_version", np.int32(-1))),
        ]
        for name, edit in cases:
            hostile(base, name, edit)
            refused(tmp, ["run", "--resume", name], f"resume {name}")
        # `show` reads the root, /summary and /sweeps (tests/check_show_sweeps.py), not
        # the runs' groups: the root's attributes are checked
        for name in ("schema-array.h5", "written-array.h5", "schema-negative.h5"):
            refused(tmp, ["show", name], f"show {name}")
        refused(tmp, ["choose", "schema-negative.h5", "--energy-error", "1"],
                "choose schema -1", "schema_version is -1")
        refused(tmp, ["compare", "schema-negative.h5", "good.h5"], "compare schema -1",
                "schema_version is -1")

        # a /summary status none of ours: show, choose and compare refuse it in one line
        # (they printed and ranked it)
        def summary_status(f):
            rows = f["summary"][()]
            rows["status"][0] = b"weird"
            del f["summary"]
            f.create_dataset("summary", data=rows)
        hostile(base, "summary-status.h5", summary_status)
        for args in (["show", "summary-status.h5"],
                     ["choose", "summary-status.h5", "--energy-error", "1e-3"],
                     ["compare", "good.h5", "summary-status.h5"]):
            refused(tmp, args, " ".join(args), "status 'weird'")
        # two /summary rows of one run id: readers find a run by its id (choose named
        # such an id as a problem variant)
        def summary_twins(f):
            rows = f["summary"][()]
            rows["run_id"][1] = rows["run_id"][0]
            del f["summary"]
            f.create_dataset("summary", data=rows)
        hostile(base, "summary-twins.h5", summary_twins)
        for args in (["show", "summary-twins.h5"],
                     ["choose", "summary-twins.h5", "--energy-error", "1e-3"],
                     ["compare", "good.h5", "summary-twins.h5"],
                     ["run", "--resume", "summary-twins.h5"]):
            refused(tmp, args, " ".join(args), "twice")
        r = run(["show", "steps-array.h5"], tmp)
        check(r.returncode == 0, f"show steps-array.h5: /summary alone is still readable "
                                 f"(exit {r.returncode}: {r.stderr!r})")

        # a run whose group is damaged: exit 2, as the README's table says for a file
        # that is not readable as ours
        hostile(base, "no-series.h5", lambda f: first_run(f).__delitem__("time"))
        refused(tmp, ["run", "--resume", "no-series.h5"], "resume a run without its series",
                "is damaged")

        # /summary claiming more rows than the file wrote, or than a suite can have
        def more_rows(f):
            rows = f["summary"][()]
            del f["summary"]
            f.create_dataset("summary", data=np.concatenate([rows] * 3))
        hostile(base, "more-rows.h5", more_rows)
        refused(tmp, ["show", "more-rows.h5"], "show more rows than written",
                "n_runs_written")

        def many_rows(f):
            rows = f["summary"][()]
            del f["summary"]
            f.create_dataset("summary", data=np.resize(rows, 100001), compression="gzip")
            replace_attr(f, "n_runs_written", np.uint64(100001))
        hostile(base, "many-rows.h5", many_rows)
        refused(tmp, ["show", "many-rows.h5"], "show 100001 rows", "at most 100000")

        # /tables (a suite's own tables), which `show` reads: each group checked, names
        # escaped
        with open(os.path.join(tmp, "t.yaml"), "w") as f:
            f.write(SUITE + "  - {table: {name: j2, order: 2, compose: verlet, weights: [1]},"
                    " steps_per_period: 16}\n")
        r = run(["run", "t.yaml", "-o", "tables.h5"], tmp)
        check(r.returncode == 0, f"the suite with a table runs: {r.stderr}")
        tables = os.path.join(tmp, "tables.h5")

        def tables_dataset(f):
            del f["tables"]
            f["tables"] = np.arange(3.0)
        table_cases = [
            ("tables-dataset.h5", tables_dataset, "/tables is not a group"),
            ("table-dataset.h5", lambda f: (f["tables"].__delitem__("j2"),
                                            f["tables"].create_dataset("j2", data=[1.0])),
             "it is not a group"),
            ("table-order-array.h5", lambda f: replace_attr(f["tables/j2"], "claimed_order",
                                                            np.arange(4096, dtype="i4")),
             "claimed_order"),
            ("table-form-number.h5", lambda f: replace_attr(f["tables/j2"], "form", 3.5),
             "form"),
            ("table-escape-name.h5", lambda f: f["tables"].create_group("x\x1b[31m\ny"),
             "x\\x1b[31m"),
        ]
        for name, edit, needle in table_cases:
            hostile(tables, name, edit)
            refused(tmp, ["show", name], f"show {name}", needle)

        # not regular files: refused at once, not read or waited on
        os.mkfifo(os.path.join(tmp, "fifo.h5"))
        refused(tmp, ["show", "fifo.h5"], "show a FIFO", "not a regular file")
        refused(tmp, ["run", "--resume", "fifo.h5"], "resume a FIFO", "not a regular file")
        refused(tmp, ["show", "/dev/zero"], "show /dev/zero", "not a regular file")
        refused(tmp, ["run", "fifo.h5"], "run a FIFO as the suite", "not a regular file")

        # a damaged root-group header (64 zero bytes from byte 128 of this small file):
        # H5Fopen fails, and HDF5's clean-up at exit used to add "HDF5: infinite loop
        # closing library" and a line of codes to our one line
        with open(base, "rb") as f:
            data = bytearray(f.read())
        data[128:192] = b"\x00" * 64
        with open(os.path.join(tmp, "header.h5"), "wb") as f:
            f.write(data)
        refused(tmp, ["show", "header.h5"], "show a damaged header", env=NO_LEAK_CHECK)
        refused(tmp, ["run", "--resume", "header.h5"], "resume a damaged header",
                env=NO_LEAK_CHECK)

        # /summary's datatype with one member's offset moved past the row (one flipped
        # bit did this and HDF5 read 64 MiB past each row: a crash). The member's encoded
        # offset is found after its NUL-padded name in the file's datatype message: the
        # name padded to a multiple of 8 bytes, then the offset in 4 bytes.
        with h5py.File(base, "r") as f:
            offset = f["summary"].dtype.fields["energy_drift_per_period"][1]
        with open(base, "rb") as f:
            data = bytearray(f.read())
        name = b"energy_drift_per_period"
        pattern = name + b"\x00" * (8 - len(name) % 8) + offset.to_bytes(4, "little")
        at = data.find(pattern)
        check(at >= 0 and data.find(pattern, at + 1) < 0,
              "the summary member's offset found once in the file")
        if at >= 0:
            data[at + len(pattern) - 1] ^= 0x04  # offset + 64 MiB
            with open(os.path.join(tmp, "offset.h5"), "wb") as f:
                f.write(data)
            for command in (["show", "offset.h5"], ["run", "--resume", "offset.h5"],
                            ["choose", "offset.h5", "--energy-error", "1e-3"],
                            ["compare", "offset.h5", "offset.h5"]):
                refused(tmp, command, f"{command[0]}: a summary member past its row",
                        "/summary is not a table of runs")

        # a global heap object (a variable-length text: a run's config, a note) whose
        # size says 8 GiB, as one flipped bit left it in a tester's file: HDF5 1.10 copies
        # that much and faults (SIGSEGV in resume and compare before). Every object of
        # the file's first heap collection in turn; whatever a command reads of it, it
        # exits 0 or with one line and 2, never on a signal, and leaves no temporary file.
        # Under AddressSanitizer its memcpy check reports HDF5's own overrun and aborts
        # first (the sanitizer stage skips this; the release build is what users run).
        sanitized = "-fsanitize=address" in run(["--version"], tmp).stdout
        with open(base, "rb") as f:
            data = bytes(f.read())
        col = -1 if sanitized else data.find(b"GCOL")
        if sanitized:
            print("skipped under AddressSanitizer: heap objects of 8 GiB")
        check(sanitized or col >= 0, "the file has a global heap collection")
        objects, at = [], col + 16
        end = col + int.from_bytes(data[col + 8:col + 16], "little") if col >= 0 else 0
        while col >= 0 and at + 16 <= end:
            index = int.from_bytes(data[at:at + 2], "little")
            size = int.from_bytes(data[at + 8:at + 16], "little")
            if index == 0:
                break
            objects.append(at)
            at += 16 + (size + 7) // 8 * 8
        check(sanitized or len(objects) >= 5, f"heap objects found: {len(objects)}")
        faults = []
        for k, obj in enumerate(objects):
            damaged = bytearray(data)
            damaged[obj + 8:obj + 16] = (1 << 33).to_bytes(8, "little")
            name = f"heap{k}.h5"
            with open(os.path.join(tmp, name), "wb") as f:
                f.write(damaged)
            for command in (["show", name], ["compare", name, "good.h5"],
                            ["choose", name, "--energy-error", "1e-3"],
                            ["run", "--resume", name, "-j", "1"]):
                try:
                    r = run(command, tmp, timeout=30)
                except subprocess.TimeoutExpired:
                    faults.append(f"{' '.join(command)}: hangs")
                    continue
                ok = r.returncode in (0, 3) or (r.returncode == 2 and r.stderr.count("\n") == 1)
                if not ok:
                    faults.append(f"{' '.join(command)}: exit {r.returncode} {r.stderr[-200:]!r}")
            check(not [x for x in os.listdir(tmp) if ".tmp-" in x], f"{name}: no temporary file left")
        check(not faults, f"a heap object of 8 GiB: {faults[:4]}")

        # texts from a file are printed with their control bytes escaped
        def evil_texts(f):
            rows = f["summary"][()]
            rows["run_id"][0] = b"evil\x1b[31m\nrow"
            rows["reason"][0] = b"why\x1b]0;title\x07"
            del f["summary"]
            f.create_dataset("summary", data=rows)
            f.attrs["suite_source"] = "src\x1b[2J\nsecond.yaml"
        hostile(base, "evil.h5", evil_texts)
        for fmt in ("table", "csv"):
            r = run(["show", "evil.h5", "--format", fmt], tmp)
            check(r.returncode == 0, f"show evil.h5 --format {fmt}: exit {r.returncode}")
            check("\x1b" not in r.stdout and "\x07" not in r.stdout,
                  f"show --format {fmt}: a raw control byte reached the terminal")
            check("evil\\x1b[31m\\nrow" in r.stdout, f"show --format {fmt}: the run id is "
                  f"not shown escaped: {r.stdout!r}")
        # the suite's source names its errors: break the suite text to see it printed
        def evil_source_bad_suite(f):
            evil_texts(f)
            replace_attr(f, "suite_text", "horizon: [")
        hostile(base, "evil-source.h5", evil_source_bad_suite)
        refused(tmp, ["run", "--resume", "evil-source.h5"], "resume with a hostile source",
                "src\\x1b[2J\\nsecond.yaml")
        # the places named are in the copy the file holds, and the message says so
        refused(tmp, ["run", "--resume", "evil-source.h5"], "resume a garbled stored suite",
                "the suite evil-source.h5 holds (a copy of src\\x1b[2J\\nsecond.yaml) does "
                "not read: src\\x1b[2J\\nsecond.yaml:")

        # a path with a newline: still one line
        weird = os.path.join(tmp, "a\nb.h5")
        shutil.copy(os.path.join(tmp, "header.h5"), weird)
        refused(tmp, ["show", "a\nb.h5"], "show a path with a newline", "a\\nb.h5",
                env=NO_LEAK_CHECK)

        # the suite text of a file hangs nothing: a range that never ended before
        hostile(base, "endless.h5", lambda f: replace_attr(
            f, "suite_text", SUITE.replace("[16, 32]", "{from: 1, to: 100, factor: "
                                           "1.000000000000001}")))
        refused(tmp, ["run", "--resume", "endless.h5"], "resume an endless range",
                "takes more than 100000 steps")

    if failures:
        print(f"{len(failures)} failure(s)")
        sys.exit(1)
    print("check_hostile_files: all checks passed")


if __name__ == "__main__":
    main()

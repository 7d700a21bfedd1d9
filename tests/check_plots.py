#!/usr/bin/python3
"""The plot script on a small suite with ok, swamped and diverged runs and sweeps: every
figure is written (PNG and SVG), every run is drawn in every cost panel with its status
(none dropped), one colour per method in every panel of every figure and different
colours for different methods, energy bands only where dE keeps one sign in a bucket,
and the chosen run for a target is the cheapest ok run meeting it (computed here again
from the file).

The SVGs name what is drawn: groups `point/<status>/<run>`, `line/<status>/<run>`,
`end/<status>/<run>`, `band/<run>`, `chosen/<run>`, `sweep/<name>`.

usage: check_plots.py PATH/TO/driftmark     (CTest passes the built executable)
"""
import os
import re
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET

import h5py
import numpy as np

EXE = sys.argv[1]
HERE = os.path.dirname(os.path.abspath(__file__))
PLOT = os.path.join(HERE, "..", "results", "plot_results.py")
SVG = "{http://www.w3.org/2000/svg}"

# Kepler e = 0.6 at 32 steps per period: Verlet is swamped, Yoshida 4 and RK4 diverge.
SUITE = """\
name: plots
output: {out}
horizon: {{periods: 400}}
samples: 256
problems:
  - {{problem: pendulum, amplitude: 3.0}}
  - {{problem: kepler, eccentricity: 0.6}}
methods:
  - {{method: verlet, steps_per_period: [32, 64, 128]}}
  - {{method: yoshida4, steps_per_period: 32}}
  - {{method: rk4, steps_per_period: 24}}
  - {{method: cvode-adams, rtol: [1.0e-6, 1.0e-8]}}
"""
TARGET_ENERGY, TARGET_PHASE = 1e-2, 1e-1

failures = []


def check(cond, what):
    if not cond:
        failures.append(what)
        print("FAIL:", what)


def text(v):
    return v.decode() if isinstance(v, bytes) else str(v)


def plot(path, outdir, *extra):
    return subprocess.run([sys.executable, PLOT, path, "-o", outdir, *extra], capture_output=True, text=True)


def groups(svg_path):
    """{gid: [fill and stroke colours of everything inside]} for the named groups."""
    out = {}
    for g in ET.parse(svg_path).iter(SVG + "g"):
        gid = g.get("id", "")
        if "/" not in gid:
            continue
        colours = []
        for el in g.iter():
            colours += re.findall(r"(?:fill|stroke):\s*(#[0-9a-fA-F]{6})", el.get("style", ""))
        out.setdefault(gid, []).extend(colours)
    return out


def read_runs(path):
    runs = {}
    with h5py.File(path, "r") as f:
        for row in f["summary"][()]:
            rid = text(row["run_id"])
            a = f["runs"][rid].attrs
            g = f["runs"][rid]
            periods = float(a["t_reached"]) / float(a["period_exact"])
            runs[rid] = {
                "method": text(a["method"]), "status": text(a["status"]),
                "energy": float(a["max_energy_error"]), "phase": abs(float(a["phase_error_per_period"])),
                "force": float(a["force_evals_per_period"]), "time": float(a["wall_seconds"]) / periods,
                "one_sign": bool(np.any(g["energy_error_min"][()] * g["energy_error_max"][()] > 0)),
            }
    return runs


def cheapest(runs, variant, error, target, cost):
    ok = [(r[cost], r[error], rid) for rid, r in runs.items() if rid.startswith(variant + ".")
          and r["status"] == "ok" and np.isfinite(r[error]) and 0 < r[error] <= target
          and np.isfinite(r[cost]) and r[cost] > 0]
    return min(ok)[2] if ok else "none"


def main():
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "plots.h5")
        with open(os.path.join(tmp, "plots.yaml"), "w") as f:
            f.write(SUITE.format(out=path))
        p = subprocess.run([EXE, "run", os.path.join(tmp, "plots.yaml")], capture_output=True, text=True)
        check(p.returncode == 0, f"run exit status {p.returncode}: {p.stderr.strip()}")
        runs = read_runs(path)
        statuses = {r["status"] for r in runs.values()}
        check({"ok", "swamped", "diverged"} <= statuses, f"the suite has ok, swamped and diverged runs: {statuses}")
        variants = ["pendulum-amplitude3", "kepler-eccentricity0.6"]
        figures = [f"{v}-{k}" for v in variants for k in ("energy", "phase", "work", "global")] + ["cost"]

        # the command line as before: PNGs only, no target, nothing chosen
        d0 = os.path.join(tmp, "plain")
        p = plot(path, d0)
        check(p.returncode == 0, f"plot exit {p.returncode}: {p.stderr.strip()[-300:]}")
        check("chosen:" not in p.stdout, "no chosen run without a target")
        for name in figures:
            png = os.path.join(d0, name + ".png")
            ok = os.path.isfile(png) and os.path.getsize(png) > 1000
            check(ok and open(png, "rb").read(8) == b"\x89PNG\r\n\x1a\n", f"{name}.png written")
            check(not os.path.exists(os.path.join(d0, name + ".svg")), f"{name}.svg only when asked")

        # PNG and SVG, with both targets
        d1 = os.path.join(tmp, "both")
        p = plot(path, d1, "--format", "both", "--target-energy", str(TARGET_ENERGY),
                 "--target-phase", str(TARGET_PHASE))
        check(p.returncode == 0, f"plot exit {p.returncode}: {p.stderr.strip()[-300:]}")
        for name in figures:
            for ext in ("png", "svg"):
                check(os.path.isfile(os.path.join(d1, f"{name}.{ext}")), f"{name}.{ext} written")
        svgs = {name: groups(os.path.join(d1, name + ".svg")) for name in figures}

        # every run is drawn with its own status: a point in its variant's cost figure and
        # in the overview, a line in its energy plot, a mark where it stopped
        for rid, r in runs.items():
            v = [x for x in variants if rid.startswith(x + ".")][0]
            gid = f"point/{r['status']}/{rid}"
            check(gid in svgs[f"{v}-work"], f"{rid}: drawn as {gid} in {v}-work")
            check(gid in svgs["cost"], f"{rid}: drawn as {gid} in the overview")
            check(f"line/{r['status']}/{rid}" in svgs[f"{v}-energy"], f"{rid}: energy line with its status")
            if r["status"] != "ok":
                check(f"end/{r['status']}/{rid}" in svgs[f"{v}-energy"], f"{rid}: marked where it stopped")
            check((f"band/{rid}" in svgs[f"{v}-energy"]) == r["one_sign"],
                  f"{rid}: an energy band exactly when some bucket keeps one sign ({r['one_sign']})")
        # ... and in its global-error plot, marked as in the others where it is not ok
        with h5py.File(path, "r") as f:
            global_runs = {rid for rid in runs if len(f["runs"][rid].get("global_error", [])) > 0
                           and np.any(f["runs"][rid]["global_error"][()] > 0)}
        check({r["status"] for rid, r in runs.items() if rid in global_runs} >= {"swamped", "diverged"},
              f"global errors of swamped and diverged runs to draw: {sorted(global_runs)}")
        for rid in global_runs:
            v = [x for x in variants if rid.startswith(x + ".")][0]
            st = runs[rid]["status"]
            check(f"line/{st}/{rid}" in svgs[f"{v}-global"], f"{rid}: global line with its status")
            if st != "ok":
                check(f"end/{st}/{rid}" in svgs[f"{v}-global"], f"{rid}: marked in {v}-global")
        # the global error's axis says what distance it is
        words = " ".join(t.text or "" for t in ET.parse(os.path.join(
            d1, "kepler-eccentricity0.6-global.svg")).iter(SVG + "text"))
        check("positions and momenta together" in words, f"the global axis: {words[:300]!r}")
        # the time axis of a problem without a period: the unit of time the units name
        sys.path.insert(0, os.path.dirname(PLOT))
        import plot_results
        for units, label in (("AU, days, solar masses", "time (days)"),
                             ("pc; Myr; solar masses", "time (Myr)"),
                             ("G = 1, M = 1", "time (units: G = 1, M = 1)"),
                             ("s, h", "time (units: s, h)")):
            got = plot_results.own_time_label([{"units": units}])
            check(got == label, f"units {units!r}: {got!r}, expected {label!r}")
        check(plot_results.own_time_label([{"units": ""}]) == "time (the suite's units)",
              "no units stated: the suite's own")

        # and in each of the four panels of its cost figure
        tree = ET.parse(os.path.join(d1, "kepler-eccentricity0.6-work.svg"))
        ids = [g.get("id") for g in tree.iter(SVG + "g")]
        for rid in runs:
            if rid.startswith("kepler"):
                gid = f"point/{runs[rid]['status']}/{rid}"
                check(ids.count(gid) == 4, f"{rid}: in all 4 cost panels ({ids.count(gid)})")

        # one colour per method in every figure; different methods, different colours
        colour = {}
        for name, gs in svgs.items():
            for gid, cols in gs.items():
                kind, _, rest = gid.partition("/")
                if kind != "point" or not rest.startswith("ok/"):
                    continue
                rid = rest[3:]
                fills = set(cols) - {"#ffffff", "#000000"} or set(cols)
                colour.setdefault(runs[rid]["method"], set()).update(fills)
        for m, cs in colour.items():
            check(len(cs) == 1, f"{m}: one colour in every cost panel and figure, got {sorted(cs)}")
        firsts = [sorted(cs)[0] for cs in colour.values()]
        check(len(set(firsts)) == len(firsts), f"different colours for different methods: {colour}")

        # the chosen run: the cheapest ok run meeting the target, as printed and ringed
        lines = [x for x in p.stdout.splitlines() if x.startswith("chosen:")]
        check(len(lines) == 2 * 2 * len(variants), f"a chosen line per variant, cost and target: {len(lines)}")
        for v in variants:
            for error, target in (("energy", TARGET_ENERGY), ("phase", TARGET_PHASE)):
                for cost, words in (("force", "force evaluations"), ("time", "wall seconds")):
                    want = cheapest(runs, v, error, target, cost)
                    got = [x for x in lines if x.startswith(f"chosen: {v}:") and words in x
                           and (("max |dE|" in x) == (error == "energy"))]
                    check(len(got) == 1 and got[0].split(": ")[-1].split(" ")[0] == want,
                          f"{v} {error} <= {target} by {cost}: chose {got}, expected {want}")
                    if want != "none":
                        check(f"chosen/{want}" in svgs[f"{v}-work"], f"{want} ringed in {v}-work")

        # a target that is not a positive number is refused with exit status 2
        def one_line(q, label, needle):
            check(q.returncode == 2, f"{label}: exit {q.returncode} (expected 2): {q.stderr!r}")
            check(q.stderr.count("\n") == 1 and q.stderr.startswith("plot_results: "),
                  f"{label}: not one line of ours: {q.stderr!r}")
            check(needle in q.stderr, f"{label}: {needle!r} not in {q.stderr!r}")
            check(not os.path.exists(os.path.join(tmp, "bad")), f"{label}: something written")

        for bad in ("-1", "0", "abc", "nan"):
            q = plot(path, os.path.join(tmp, "bad"), "--target-energy", bad)
            one_line(q, f"--target-energy {bad}", "expected a positive number")
        one_line(plot(path, os.path.join(tmp, "bad"), "--format", "gif"), "--format gif",
                 "--format")
        one_line(plot(path, os.path.join(tmp, "bad"), "--bogus"), "--bogus", "--bogus")

        # files that are not ours: one line, exit 2, no traceback, nothing written
        other = os.path.join(tmp, "other.h5")
        with h5py.File(other, "w") as f:
            f.attrs["x"] = 1
        no_summary = os.path.join(tmp, "no-summary.h5")
        with open(path, "rb") as f:
            data = f.read()
        with open(no_summary, "wb") as f:
            f.write(data)
        with h5py.File(no_summary, "r+") as f:
            del f["summary"]
        truncated = os.path.join(tmp, "truncated.h5")
        with open(truncated, "wb") as f:
            f.write(data[:3000])
        suite = os.path.join(tmp, "plots.yaml")
        for bad, needle in ((os.path.join(tmp, "missing.h5"), "no such file"),
                            (tmp, "not a regular file"),
                            (suite, "not an HDF5 file"),
                            (other, "not a driftmark results file"),
                            (no_summary, "not a readable driftmark results file"),
                            (truncated, "not a readable driftmark results file")):
            one_line(plot(bad, os.path.join(tmp, "bad")), os.path.basename(bad), needle)
        # a soft link that leads to itself (h5py's RuntimeError): one line too
        loop = os.path.join(tmp, "loop.h5")
        with open(loop, "wb") as f:
            f.write(data)
        with h5py.File(loop, "r+") as f:
            del f["runs"]
            f["runs"] = h5py.SoftLink("/runs")
        one_line(plot(loop, os.path.join(tmp, "bad")), "a soft link loop",
                 "not a readable driftmark results file")
        # crossings that are all NaN (a damaged file that still reads): drawn without
        # them (matplotlib's markers failed on a line with no finite point: a traceback
        # after six files were written)
        nan_crossings = os.path.join(tmp, "nan-crossings.h5")
        with open(nan_crossings, "wb") as f:
            f.write(data)
        with h5py.File(nan_crossings, "r+") as f:
            for rid in f["runs"]:
                for name in ("crossing_time", "phase_error"):
                    if name in f["runs"][rid] and f["runs"][rid][name].shape[0] > 0:
                        f["runs"][rid][name][...] = np.nan
        q = plot(nan_crossings, os.path.join(tmp, "nan-plots"))
        check(q.returncode == 0 and "Traceback" not in q.stderr,
              f"NaN crossings drawn: exit {q.returncode} {q.stderr[-300:]!r}")
        if os.geteuid() != 0:   # root reads a file of mode 000
            unreadable = os.path.join(tmp, "unreadable.h5")
            with open(unreadable, "wb") as f:
                f.write(data)
            os.chmod(unreadable, 0)
            one_line(plot(unreadable, os.path.join(tmp, "bad")), "unreadable", "cannot be read")

    if failures:
        print(f"0 passed, {len(failures)} failed")
        sys.exit(1)
    print("plots: 1 passed, 0 failed")


if __name__ == "__main__":
    main()

#!/usr/bin/python3
"""The N-body problem from outside: the outer solar system of tests/outer_solar_system.csv
(Hairer, Lubich, Wanner, Geometric Numerical Integration, 2006, section I.2.4) run by
driftmark, its figures read back with h5py and computed again with numpy:
- the energy of the started (barycentric) state, numpy's own sum, to 1e-13;
- Jupiter's osculating period about the Sun from the vis-viva law (numpy), and the
  period driftmark measures over 10^5 days, both within 1 % of 4332.6 days (Jupiter's
  sidereal period, a fact of the trade, from memory);
- the invariant series present, finite and at rounding for Stormer-Verlet, and the
  closest approach below the smallest starting distance of a pair (numpy);
and from the command line, a bad bodies file is one line FILE:LINE:COLUMN, exit 2, and
no results file.

usage: check_nbody.py PATH/TO/driftmark
"""
import os
import sys
import tempfile

import h5py
import numpy as np

from checklib import check, finish, run

EXE = sys.argv[1]
HERE = os.path.dirname(os.path.abspath(__file__))
CSV = os.path.join(HERE, "outer_solar_system.csv")
G = 2.95912208286e-4


def bodies():
    names, rows = [], []
    for line in open(CSV):
        line = line.strip()
        if not line or line.startswith("#") or line.startswith("name"):
            continue
        f = [x.strip() for x in line.split(",")]
        names.append(f[0])
        rows.append([float(x) for x in f[1:]])
    a = np.array(rows)
    return names, a[:, 0], a[:, 1:4], a[:, 4:7]


def energy(m, q, v):
    M = m.sum()
    q = q - (m[:, None] * q).sum(0) / M
    v = v - (m[:, None] * v).sum(0) / M
    T = 0.5 * (m * (v * v).sum(1)).sum()
    V = 0.0
    for i in range(len(m)):
        for j in range(i + 1, len(m)):
            V -= G * m[i] * m[j] / np.linalg.norm(q[i] - q[j])
    return T + V


def main():
    names, m, q, v = bodies()
    check(names == ["Sun", "Jupiter", "Saturn", "Uranus", "Neptune", "Pluto"], f"bodies {names}")
    mu = G * (m[0] + m[1])
    r, w = q[1] - q[0], v[1] - v[0]
    a = 1.0 / (2.0 / np.linalg.norm(r) - w @ w / mu)
    osculating = 2 * np.pi * np.sqrt(a ** 3 / mu)
    check(abs(osculating / 4332.6 - 1) < 0.01, f"Jupiter's osculating period {osculating}")
    closest_start = min(np.linalg.norm(q[i] - q[j]) for i in range(6) for j in range(i + 1, 6))

    with tempfile.TemporaryDirectory() as tmp:
        suite = os.path.join(tmp, "outer.yaml")
        out = os.path.join(tmp, "outer.h5")
        with open(suite, "w") as f:
            f.write(f"output: {out}\nhorizon: {{time: 100000}}\nbuckets: 300\nproblems:\n"
                    f"  - problem: nbody\n    G: {G!r}\n    units: AU, days, solar masses\n"
                    f"    bodies_file: {CSV}\n    file_holds: velocities\n"
                    f"    period_of: {{body: Jupiter, around: Sun}}\n"
                    f"methods:\n  - {{method: verlet, h: 10}}\n")
        p = run(EXE, ["run", suite])
        check(p.returncode == 0, f"run: exit {p.returncode}: {p.stderr.strip()[-300:]}")
        with h5py.File(out, "r") as h:
            g = h["runs"][h["summary"]["run_id"][0].decode()]
            E = g.attrs["energy"]
            want = energy(m, q, v)
            check(abs(E / want - 1) < 1e-13, f"energy {E!r} against numpy {want!r}")
            P = g.attrs["period_measured"]
            check(abs(P / 4332.6 - 1) < 0.01, f"measured period {P}")
            check(np.isnan(g.attrs["period"]) and np.isnan(g.attrs["phase_error_per_period"]),
                  "period and phase figures NaN")
            check(g.attrs["units"] == "AU, days, solar masses" and g.attrs["bodies"] == 6 and
                  g.attrs["period_of"] == "Jupiter around Sun" and g.attrs["bodies_source"] == CSV,
                  "body attributes")
            for name in ("momentum", "angular_momentum", "centre_of_mass"):
                s = g[f"{name}_error"][()]
                check(len(s) == 300 and np.all(np.isfinite(s)) and np.abs(s).max() < 1e-12,
                      f"{name}_error series")
            c = g.attrs["closest_approach"]
            check(0 < c < closest_start, f"closest approach {c} (start {closest_start})")
        # show's text table carries the measured period too (found by a tester: only its
        # CSV and JSON did), right-aligned under its heading as the file holds it
        p = run(EXE, ["show", out])
        lines = p.stdout.splitlines()
        head = lines[0] if lines else ""
        end = head.find("measured period") + len("measured period")
        row = next((l for l in lines[1:] if l.startswith("nbody")), "")
        cell = row[:end].split()[-1] if row[:end].split() else ""
        check(p.returncode == 0 and end > len("measured period") and len(row) > end
              and row[end:end + 2] == "  " and cell == f"{P:.10g}",
              f"show: measured period {cell!r} against {P:.10g}: {head!r} {row!r}")
        # a bad bodies file: one line naming the file, its line and column; exit 2; no file
        bad = os.path.join(tmp, "bad.csv")
        with open(bad, "w") as f:
            f.write("Sun, 1, 0, 0, 0, 0, 0, 0\nRock, 1e-3, 1, 0, 0, 0, 1\n")
        with open(suite, "w") as f:
            f.write(f"output: {tmp}/bad.h5\nhorizon: {{time: 100}}\nproblems:\n"
                    f"  - problem: nbody\n    G: 1\n    units: u\n    bodies_file: bad.csv\n"
                    f"    file_holds: velocities\nmethods:\n  - {{method: verlet, h: 0.1}}\n")
        p = run(EXE, ["run", suite])
        err = p.stderr.strip()
        check(p.returncode == 2 and err.count("\n") == 0 and f"{bad}:2:1:" in err and
              "7 fields" in err and not os.path.exists(f"{tmp}/bad.h5"),
              f"bad bodies file: exit {p.returncode}, {err!r}")
        # --resume after the bodies file changed: refused in one line, the file as it was
        # (its runs were of the old bodies; continuing them, or dropping them for the new
        # system's runs, would mislead)
        sys_csv = os.path.join(tmp, "sys.csv")
        with open(sys_csv, "w") as f:
            f.write("A, 1, 0, 0, 0, 0, 0, 0\nB, 1e-3, 1, 0, 0, 0, 1, 0\n")
        with open(suite, "w") as f:
            f.write(f"output: {tmp}/sys.h5\nhorizon: {{time: 100}}\nproblems:\n"
                    f"  - problem: nbody\n    G: 1\n    units: u\n    bodies_file: sys.csv\n"
                    f"    file_holds: velocities\nmethods:\n  - {{method: verlet, h: 0.1}}\n")
        p = run(EXE, ["run", suite], cwd=tmp)
        check(p.returncode == 0, f"sys run: exit {p.returncode} {p.stderr!r}")
        before = open(f"{tmp}/sys.h5", "rb").read()
        with open(sys_csv, "w") as f:
            f.write("A, 1, 0, 0, 0, 0, 0, 0\nB, 5e-3, 1, 0, 0, 0, 1, 0\n")
        p = run(EXE, ["run", "--resume", f"{tmp}/sys.h5"], cwd=tmp)
        err = p.stderr.strip()
        check(p.returncode == 2 and err.count("\n") == 0 and "cannot resume" in err
              and "changed since" in err,
              f"resume after the bodies changed: exit {p.returncode}, {err!r}")
        check(p.returncode == 2 and open(f"{tmp}/sys.h5", "rb").read() == before,
              "the refused resume leaves the file as it was")
        # --resume from another working folder (found by a tester: a relative bodies_file
        # was looked up from there, so the resume was refused, or took another file of
        # the same name): relative paths are taken from the suite's folder as it was when
        # the suite was first read, recorded absolute as suite_folder; a same-named file
        # in the working folder is not read, and a change of the bodies is still refused
        with open(os.path.join(tmp, "rel.yaml"), "w") as f:
            f.write("output: rel.h5\nhorizon: {time: 100}\nproblems:\n"
                    "  - problem: nbody\n    G: 1\n    units: u\n    bodies_file: sys.csv\n"
                    "    file_holds: velocities\nmethods:\n  - {method: verlet, h: 0.1}\n")
        p = run(EXE, ["run", "rel.yaml"], cwd=tmp)
        check(p.returncode == 0, f"rel run: exit {p.returncode} {p.stderr!r}")
        with h5py.File(f"{tmp}/rel.h5", "r") as h:
            folder = h.attrs["suite_folder"]
            folder = folder.decode() if isinstance(folder, bytes) else str(folder)
        check(folder == os.path.realpath(tmp), f"suite_folder {folder!r}, expected {tmp!r}")
        elsewhere = os.path.join(tmp, "elsewhere")
        os.mkdir(elsewhere)
        with open(os.path.join(elsewhere, "sys.csv"), "w") as f:
            f.write("A, 1, 0, 0, 0, 0, 0, 0\nB, 9e-3, 1, 0, 0, 0, 1, 0\n")
        p = run(EXE, ["run", "--resume", f"{tmp}/rel.h5"], cwd=elsewhere)
        check(p.returncode == 0 and "keeping 1 completed runs" in p.stderr,
              f"resume from another folder: exit {p.returncode} {p.stderr!r}")
        with open(sys_csv, "w") as f:
            f.write("A, 1, 0, 0, 0, 0, 0, 0\nB, 2e-3, 1, 0, 0, 0, 1, 0\n")
        p = run(EXE, ["run", "--resume", f"{tmp}/rel.h5"], cwd=elsewhere)
        check(p.returncode == 2 and "changed since" in p.stderr,
              f"resume from another folder after the bodies changed: exit {p.returncode} "
              f"{p.stderr!r}")
    finish("check_nbody")


main()

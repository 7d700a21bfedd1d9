#!/usr/bin/python3
"""End to end: run a small suite, read the file back with h5py (an outside reader) and
check every summary field against the run's own datasets; run it again (and with other
--jobs) and require bit-identical numerical datasets; run the plot script on the file.

usage: check_end_to_end.py PATH/TO/driftmark     (CTest passes the built executable)
"""
import json
import math
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np

EXE = sys.argv[1]
HERE = os.path.dirname(os.path.abspath(__file__))
PLOT = os.path.join(HERE, "..", "results", "plot_results.py")

SUITE = """\
name: e2e
output: {out}
horizon: {{periods: 300}}
samples: 512
problems:
  - {{problem: pendulum, amplitude: [1.0, 2.5]}}
  - {{problem: kepler, eccentricity: 0.3}}
  - {{problem: harmonic}}
methods:
  - {{method: verlet, steps_per_period: [32, 64, 128]}}
  - {{method: yoshida4, steps_per_period: 40}}
  - {{method: rk4, h: 0.05}}
  - {{method: cvode-adams, rtol: [1.0e-6, 1.0e-8]}}
"""

failures = []


def check(cond, what):
    if not cond:
        failures.append(what)
        print("FAIL:", what)


def close(a, b, rel, what):
    ok = (math.isnan(a) and math.isnan(b)) or abs(a - b) <= rel * max(abs(b), 1e-300)
    check(ok, f"{what}: {a!r} vs {b!r} (rel tol {rel})")


def text(v):
    return v.decode() if isinstance(v, bytes) else str(v)


def run_suite(tmp, name, jobs):
    out = os.path.join(tmp, name)
    suite = os.path.join(tmp, name + ".yaml")
    with open(suite, "w") as f:
        f.write(SUITE.format(out=out))
    p = subprocess.run([EXE, "run", suite, "--jobs", str(jobs)], capture_output=True, text=True)
    check(p.returncode == 0, f"run exit status {p.returncode}: {p.stderr.strip()}")
    return out, p.stdout


NUMERIC = ("time", "energy_error", "energy_error_min", "energy_error_max", "crossing_number",
           "crossing_time", "phase_error", "global_error")


def main():
    with tempfile.TemporaryDirectory() as tmp:
        path, table = run_suite(tmp, "a.h5", 1)
        check("pendulum-amplitude2.5.verlet-n64" in table, "summary table lists the runs")
        with h5py.File(path, "r") as f:
            check(text(f.attrs["format"]) == "driftmark-results", "format attribute")
            check("name: e2e" in text(f.attrs["suite_text"]), "suite text stored verbatim")
            rows = f["summary"][()]
            # 4 problem variants x (3 + 1 + 1 + 2) method variants
            check(len(rows) == 28, f"28 runs, got {len(rows)}")
            for row in rows:
                rid = text(row["run_id"])
                g = f["runs"][rid]
                status = text(row["status"])
                check(status == "ok", f"{rid}: status {status} {text(row['reason'])}")
                dmin, dmax, de = g["energy_error_min"][()], g["energy_error_max"][()], g["energy_error"][()]
                # max |dE| is the largest bucket extreme: nothing lost by thinning
                close(float(row["max_energy_error"]), float(np.max(np.maximum(np.abs(dmin), np.abs(dmax)))),
                      0.0, f"{rid}: max_energy_error vs bucket extremes")
                close(float(row["final_energy_error"]), float(de[-1]), 0.0, f"{rid}: final_energy_error")
                check(np.all(dmin <= de) and np.all(de <= dmax), f"{rid}: min <= end <= max in every bucket")
                t = g["time"][()]
                # a fixed step that does not divide the horizon ends on the first step past it
                h = float(g.attrs["h"])
                reach = 1e-12 * float(g.attrs["t_end"]) + (abs(h) if not math.isnan(h) else 0.0)
                check(0 <= t[-1] - float(g.attrs["t_end"]) + 1e-12 * t[-1] <= reach,
                      f"{rid}: series ends on the horizon (within one step)")
                # the drift is the least-squares slope of dE against t/T over the buckets
                T = float(row["period_exact"])
                slope = np.polyfit(t / T, de, 1)[0]
                close(float(row["energy_drift_per_period"]), float(slope), 1e-6, f"{rid}: energy drift")
                # every crossing is kept here (fewer than the budget): refit the phase slope
                n, ph = g["crossing_number"][()], g["phase_error"][()]
                check(int(g.attrs["crossings_total"]) == len(n), f"{rid}: all crossings kept")
                pslope = np.polyfit(n, ph, 1)[0]
                close(float(row["phase_error_per_period"]), float(pslope), 1e-6, f"{rid}: phase slope")
                close(float(row["phase_error_final"]), float(ph[-1]), 0.0, f"{rid}: final phase error")
                close(float(row["period_rel_error"]), float(pslope / (2 * math.pi)), 1e-6, f"{rid}: period error")
                close(float(row["period_measured"]), T * (1 + pslope / (2 * math.pi)), 1e-12, f"{rid}: period")
                check(int(row["steps"]) == int(g.attrs["steps"]), f"{rid}: steps")
                check(int(row["force_evals"]) == int(g.attrs["force_evals"]), f"{rid}: force evals")
            # the closed-form period in the file equals the period command's
            q = subprocess.run([EXE, "period", "pendulum", "amplitude=2.5", "--json"],
                               capture_output=True, text=True)
            ref = json.loads(q.stdout)["period"]
            r = [x for x in rows if text(x["run_id"]) == "pendulum-amplitude2.5.verlet-n64"][0]
            close(float(r["period_exact"]), ref, 0.0, "period in file vs period command")
            # sweeps: the fitted order is the log-log slope of the pairs stored beside it
            for name, sw in f["sweeps"].items():
                x = sw["h"][()] if "h" in sw else sw["rtol"][()]
                y = sw["max_energy_error"][()]
                fit = np.polyfit(np.log(x), np.log(y), 1)[0]
                close(float(sw.attrs["energy_order"]), float(fit), 1e-9, f"sweep {name}: energy order")
            # Verlet is second order (Hairer-Lubich-Wanner 2006): its sweeps fit ~2
            for name, sw in f["sweeps"].items():
                if name.endswith(".verlet"):
                    check(abs(float(sw.attrs["energy_order"]) - 2) < 0.15, f"{name}: energy order ~ 2")

        # the same suite again, and with two jobs: bit-identical numerical datasets
        path_b, _ = run_suite(tmp, "b.h5", 1)
        path_c, _ = run_suite(tmp, "c.h5", 2)
        with h5py.File(path, "r") as fa, h5py.File(path_b, "r") as fb, h5py.File(path_c, "r") as fc:
            ids_a = [text(x) for x in fa["summary"]["run_id"]]
            check(ids_a == [text(x) for x in fc["summary"]["run_id"]], "run order independent of --jobs")
            for rid in ids_a:
                for ds in NUMERIC:
                    if ds not in fa["runs"][rid]:
                        continue
                    a = fa["runs"][rid][ds][()]
                    for other, label in ((fb, "rerun"), (fc, "--jobs 2")):
                        b = other["runs"][rid][ds][()]
                        check(a.tobytes() == b.tobytes(), f"{rid}/{ds}: bit-identical on {label}")

        # the plot script writes non-empty PNGs
        pdir = os.path.join(tmp, "plots")
        p = subprocess.run([sys.executable, PLOT, path, "-o", pdir], capture_output=True, text=True)
        check(p.returncode == 0, f"plot script exit {p.returncode}: {p.stderr.strip()[-300:]}")
        pngs = [x for x in os.listdir(pdir)] if os.path.isdir(pdir) else []
        check(len(pngs) >= 9, f"plot script wrote {len(pngs)} PNGs")
        for x in pngs:
            with open(os.path.join(pdir, x), "rb") as fh:
                head = fh.read(8)
            check(head == b"\x89PNG\r\n\x1a\n" and os.path.getsize(os.path.join(pdir, x)) > 1000,
                  f"{x} is a non-empty PNG")

    if failures:
        print(f"0 passed, {len(failures)} failed")
        sys.exit(1)
    print(f"end_to_end: 1 passed, 0 failed")


if __name__ == "__main__":
    main()

#!/usr/bin/env python3
"""Plot a driftmark results file.

usage: python3 results/plot_results.py RESULTS.h5 [-o OUTDIR]

Writes, for each problem variant in the file:
  <variant>-energy.png  |energy error| against time (log-log): the line is the largest
                        |dE| inside each bucket (no peak is lost), the band spans the
                        bucket's min..max of |dE|;
  <variant>-phase.png   phase error against time at each section crossing;
and cost.png: force evaluations against max |dE|, one panel per problem variant.

Needs Debian's python3-h5py and python3-matplotlib. The file layout it reads is the
contract in results/README.md.
"""
import argparse
import os
import sys

import h5py
import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402


def text(v):
    return v.decode() if isinstance(v, bytes) else str(v)


def variant_of(group):
    """The problem variant of a run, from its attributes (run ids cannot be split on
    '.', since their numbers have decimal points): problem-<param><value>..."""
    given = [x for x in text(group.attrs["given_parameters"]).split(",") if x]
    parts = [text(group.attrs["problem"])]
    parts += [f"{name}{float(group.attrs['param_' + name]):g}" for name in given]
    return "-".join(parts)


def method_part(run):
    return run["id"][len(run["variant"]) + 1:] if run["id"].startswith(run["variant"] + ".") else run["id"]


def load(path):
    with h5py.File(path, "r") as f:
        if text(f.attrs.get("format", "")) != "driftmark-results":
            sys.exit(f"plot_results: {path}: not a driftmark results file")
        summary = f["summary"][()]
        runs = []
        for row in summary:
            rid = text(row["run_id"])
            g = f["runs"][rid]
            runs.append({
                "id": rid,
                "variant": variant_of(g),
                "method": text(row["method"]),
                "status": text(row["status"]),
                "force_evals": float(row["force_evals"]),
                "max_energy_error": float(row["max_energy_error"]),
                "period": float(row["period_exact"]),
                "time": g["time"][()],
                "dE": g["energy_error"][()],
                "dE_min": g["energy_error_min"][()],
                "dE_max": g["energy_error_max"][()],
                "crossing_time": g["crossing_time"][()],
                "phase_error": g["phase_error"][()],
            })
    return runs


def plot_energy(variant, runs, out):
    fig, ax = plt.subplots(figsize=(7, 4.5))
    for r in runs:
        t = r["time"] / r["period"]
        if len(t) == 0:
            continue
        peak = np.maximum(np.abs(r["dE_min"]), np.abs(r["dE_max"]))
        lo = np.minimum(np.abs(r["dE_min"]), np.abs(r["dE_max"]))
        # A bucket whose dE changes sign has |dE| reaching 0 inside it, which a log axis
        # cannot show: its band is drawn down to 1e-3 of the run's median peak.
        positive = peak[peak > 0]
        floor = 1e-3 * np.median(positive) if len(positive) else 1e-300
        lo = np.where(r["dE_min"] * r["dE_max"] <= 0, floor, np.maximum(lo, floor))
        (line,) = ax.loglog(t, np.maximum(peak, floor), lw=0.9, label=method_part(r))
        ax.fill_between(t, lo, np.maximum(peak, floor), color=line.get_color(), alpha=0.15, lw=0)
    ax.set_xlabel("time / period")
    ax.set_ylabel("|energy error| (relative to E scale)")
    ax.set_title(f"{variant}: energy error\n(line: largest |dE| in each bucket; band: its min..max)", fontsize=10)
    ax.legend(fontsize=7)
    fig.tight_layout()
    fig.savefig(out, dpi=110)
    plt.close(fig)


def plot_phase(variant, runs, out):
    fig, ax = plt.subplots(figsize=(7, 4.5))
    for r in runs:
        if len(r["crossing_time"]) == 0:
            continue
        ax.plot(r["crossing_time"] / r["period"], r["phase_error"], lw=0.8, label=method_part(r))
    ax.set_xscale("log")
    ax.set_yscale("symlog", linthresh=1e-9)
    ax.set_xlabel("time / period")
    ax.set_ylabel("phase error (rad)")
    ax.set_title(f"{variant}: phase error at section crossings")
    ax.legend(fontsize=7)
    fig.tight_layout()
    fig.savefig(out, dpi=110)
    plt.close(fig)


def plot_cost(groups, out):
    n = len(groups)
    cols = min(3, n)
    rows = (n + cols - 1) // cols
    fig, axes = plt.subplots(rows, cols, figsize=(4.2 * cols, 3.4 * rows), squeeze=False)
    for ax, (variant, runs) in zip(axes.flat, groups.items()):
        for method in sorted({r["method"] for r in runs}):
            pts = [(r["max_energy_error"], r["force_evals"]) for r in runs
                   if r["method"] == method and r["status"] == "ok" and r["max_energy_error"] > 0]
            if pts:
                pts.sort()
                ax.loglog([p[0] for p in pts], [p[1] for p in pts], "o-", ms=3, lw=0.8, label=method)
        ax.set_title(variant, fontsize=9)
        ax.set_xlabel("max |energy error|")
        ax.set_ylabel("force evaluations")
        ax.legend(fontsize=6)
    for ax in list(axes.flat)[n:]:
        ax.axis("off")
    fig.tight_layout()
    fig.savefig(out, dpi=110)
    plt.close(fig)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("results")
    ap.add_argument("-o", "--outdir", default=None, help="folder for the PNGs (default: beside the file)")
    a = ap.parse_args()
    outdir = a.outdir or os.path.dirname(os.path.abspath(a.results))
    os.makedirs(outdir, exist_ok=True)
    runs = load(a.results)
    groups = {}
    for r in runs:
        groups.setdefault(r["variant"], []).append(r)
    written = []
    for variant, rs in groups.items():
        for kind, fn in (("energy", plot_energy), ("phase", plot_phase)):
            out = os.path.join(outdir, f"{variant}-{kind}.png")
            fn(variant, rs, out)
            written.append(out)
    out = os.path.join(outdir, "cost.png")
    plot_cost(groups, out)
    written.append(out)
    for w in written:
        print(w)


if __name__ == "__main__":
    main()

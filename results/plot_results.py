#!/usr/bin/env python3
"""Plot a driftmark results file.

usage: python3 results/plot_results.py RESULTS.h5 [-o OUTDIR]

Writes, for each problem variant in the file:
  <variant>-energy.png  |energy error| against time (log-log): the line is the largest
                        |dE| inside each bucket (no peak is lost), the band spans the
                        bucket's min..max of |dE| where dE keeps one sign in it;
  <variant>-phase.png   phase error against time at each section crossing;
  <variant>-work.png    force evaluations and wall seconds per period against max |dE|
                        and |phase error per period|, with --target-energy X and
                        --target-phase Y the target and the cheapest ok run meeting it;
and cost.png: force evaluations per period against max |dE|, one panel per variant. A
problem without a closed-form period (nbody, henon_heiles) gets the energy plot against
time in its own units (it has no phase error and no cost per period) and, when its runs
keep one (two degrees of freedom), <variant>-section.png: the surface of section, and
when it has extra invariants (nbody), <variant>-invariants.png: their errors against time.
Every variant whose runs measured a global error (an exact solution, or the suite's
reference trajectory) gets <variant>-global.png: it against time, with the reference's
own error estimate where there is one.
--format svg (or both) writes SVG. One colour and marker per method everywhere; runs
that are not ok are drawn with their status, never dropped.

Needs Debian's python3-h5py and python3-matplotlib. The file layout it reads is the
contract in results/README.md. A missing, unreadable or foreign file, or a bad option,
is one line on stderr and exit status 2, with nothing written.
"""
import argparse
import os
import re
import sys
import zlib

import h5py
import matplotlib

matplotlib.use("Agg")
import matplotlib.colors as mcolors  # noqa: E402
import matplotlib.pyplot as plt  # noqa: E402
import matplotlib.ticker as mticker  # noqa: E402
from matplotlib.lines import Line2D  # noqa: E402
import numpy as np  # noqa: E402


def text(v):
    return v.decode() if isinstance(v, bytes) else str(v)


def variant_of(group, run_id):
    """The problem variant of a run: its id up to ".<method id>" (ids cannot be split on
    any '.', since their numbers have decimal points). The id, not the parameters, tells
    apart variants the parameters do not (two N-body systems of one G: their ids carry
    the bodies' hash); from the parameters only when the id does not hold the method."""
    method = text(group.attrs["method"]) if "method" in group.attrs else ""
    cut = run_id.rfind("." + method) if method else -1
    if cut > 0:
        return run_id[:cut]
    given = [x for x in text(group.attrs["given_parameters"]).split(",") if x]
    parts = [text(group.attrs["problem"])]
    parts += [f"{name}{float(group.attrs['param_' + name]):g}" for name in given]
    return "-".join(parts)


def method_part(run):
    return run["id"][len(run["variant"]) + 1:] if run["id"].startswith(run["variant"] + ".") else run["id"]


def refuse(message):
    """Bad input: one line on stderr, exit status 2, nothing written."""
    sys.stderr.write(f"plot_results: {message}\n")
    sys.exit(2)


class Arguments(argparse.ArgumentParser):
    """argparse, with a bad option or value as our one line (exit 2), not its usage and
    message on two."""

    def error(self, message):
        refuse(message)


def escaped(path):
    """A path as one printable line."""
    return path.encode("unicode_escape").decode("ascii")


def read(path):
    """load() and load_more() of the file at `path`, or one line and exit 2 when it is
    missing, unreadable, not HDF5 or not a driftmark results file as results/README.md
    describes it."""
    shown = escaped(path)
    if not os.path.exists(path):
        refuse(f"{shown}: no such file")
    if not os.path.isfile(path):
        refuse(f"{shown}: not a regular file")
    if not os.access(path, os.R_OK):
        refuse(f"{shown}: cannot be read (permission denied)")
    try:
        if not h5py.is_hdf5(path):
            refuse(f"{shown}: not an HDF5 file")
        runs = load(path)
        return runs, load_more(path, runs)
    except (OSError, KeyError, ValueError, TypeError, IndexError, RuntimeError) as e:
        # RuntimeError: h5py's own, e.g. a soft link that leads to itself
        why = " ".join(str(e).split()) or type(e).__name__
        refuse(f"{shown}: not a readable driftmark results file ({why})")


def load(path):
    with h5py.File(path, "r") as f:
        if text(f.attrs.get("format", "")) != "driftmark-results":
            refuse(f"{escaped(path)}: not a driftmark results file")
        summary = f["summary"][()]
        runs = []
        for row in summary:
            rid = text(row["run_id"])
            g = f["runs"][rid]
            runs.append({
                "id": rid,
                "variant": variant_of(g, rid),
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
                "section": (g["section_q"][()], g["section_p"][()]) if "section_q" in g else None,
                "global_error": g["global_error"][()] if "global_error" in g else None,
                "reference_error": g["reference_error"][()] if "reference_error" in g else None,
                "reference_valid_until": float(g.attrs.get("reference_valid_until", np.nan)),
                # the extra invariants' error series: every <name>_error dataset that is
                # not the energy's, the global or the phase error
                "invariants": {k[:-len("_error")]: g[k][()] for k in g.keys()
                               if k.endswith("_error") and k not in ("energy_error", "global_error",
                                                                      "phase_error", "reference_error")},
            })
    return runs


def load_more(path, runs):
    """The run attributes and sweeps the plots need beside load()'s; returns the sweeps as
    {name: [run id, ...]} in step order."""
    with h5py.File(path, "r") as f:
        for r in runs:
            a = f["runs"][r["id"]].attrs
            r["h"] = float(a["h"])
            r["rtol"] = float(a["rtol"])
            r["compensated"] = int(a["compensated"])
            r["t_reached"] = float(a["t_reached"])
            r["wall_seconds"] = float(a["wall_seconds"])
            r["force_evals_per_period"] = float(a.get("force_evals_per_period", np.nan))
            r["phase_error_per_period"] = float(a["phase_error_per_period"])
            r["reason"] = text(a["reason"])
            # a problem without a closed-form period (nbody): time in its own units, named
            # by the suite's `units` where it states them
            r["time_unit"] = r["period"] if np.isfinite(r["period"]) else 1.0
            r["units"] = text(a["units"]) if "units" in a else ""
            r["problem"] = text(a["problem"]) if "problem" in a else ""
            periods = r["t_reached"] / r["period"]
            r["seconds_per_period"] = r["wall_seconds"] / periods if periods > 0 else np.nan
        sweeps = {}
        for name, g in f["sweeps"].items() if "sweeps" in f else ():
            sweeps[name] = [text(x) for x in g["run_id"][()]]
    return sweeps


# ---------------------------------------------------------------------------------------
# How a method is drawn: one colour and one marker per method id, the same in every panel
# and every plot (a fixed table, not matplotlib's colour cycle, which repeats after 10
# lines and depends on drawing order). The steps of one method are told apart by line
# style and a lighter shade; the status of a run that is not ok by its own mark.

METHOD_STYLE = {
    # id: (colour, marker)
    "symeuler-a": ("#8c510a", "v"),
    "symeuler-b": ("#bf812d", "^"),
    "verlet": ("#1f4e9e", "o"),
    "verlet-dkd": ("#4f9bd9", "s"),
    "yoshida4": ("#1b7837", "D"),
    "yoshida6": ("#7fbc41", "P"),
    "yoshida8": ("#00665e", "X"),
    "suzuki4": ("#762a83", "h"),
    "optimized4": ("#c51b7d", "p"),
    "midpoint": ("#5a5a5a", "8"),
    "euler": ("#f46d43", "<"),
    "rk4": ("#d73027", ">"),
    "cvode-bdf": ("#e08214", "*"),
    "cvode-adams": ("#111111", "d"),
    "wisdom-holman": ("#d4a017", "H"),
}
# A method id missing from the table (added to the program later) gets a colour and a
# marker from its id's CRC-32: the same in every plot and every run of the script.
SPARE_COLOURS = ("#9e0142", "#3288bd", "#66a61e", "#e6ab02", "#a6761d", "#7570b3", "#1b9e77", "#666666")
SPARE_MARKERS = ("o", "s", "D", "^", "v", "<", ">", "p", "h", "*")

STEP_LINESTYLES = ("-", "--", ":", "-.", (0, (5, 1, 1, 1, 1, 1)))

# The mark of a run that is not ok, drawn at the point where it stopped (a swamped run
# ran to the end; it keeps its method's marker, hollow).
STATUS_MARK = {"diverged": "X", "failed": "x", "interrupted": ">"}
STATUS_WORDS = {
    "diverged": "diverged: stopped where |dE|\npassed the energy limit",
    "failed": "failed: the method gave up\n(reason in the file)",
    "interrupted": "interrupted (triangle):\nstopped before the horizon",
    "swamped": "swamped (hollow): |dE| >= 1/2\nover the whole last bucket",
}


def method_style(method):
    if method in METHOD_STYLE:
        return METHOD_STYLE[method]
    k = zlib.crc32(method.encode())
    return SPARE_COLOURS[k % len(SPARE_COLOURS)], SPARE_MARKERS[(k // len(SPARE_COLOURS)) % len(SPARE_MARKERS)]


def shade(colour, rank):
    """The method's colour for its rank-th step (0: the colour itself), mixed towards white."""
    rgb = np.array(mcolors.to_rgb(colour))
    return mcolors.to_hex(rgb + (1 - rgb) * min(0.5, 0.2 * rank))


def step_key(r):
    """Finest step (or tightest tolerance) first."""
    x = r["h"] if np.isfinite(r["h"]) else r["rtol"]
    return (x if np.isfinite(x) else np.inf, r["compensated"], r["id"])


def assign_ranks(runs):
    """Rank of each run among the runs of its method in one variant: its line style and shade."""
    by_method = {}
    for r in runs:
        by_method.setdefault(r["method"], []).append(r)
    for rs in by_method.values():
        for i, r in enumerate(sorted(rs, key=step_key)):
            r["rank"] = i


def run_line_style(r):
    colour, marker = method_style(r["method"])
    return dict(color=shade(colour, r["rank"]), ls=STEP_LINESTYLES[r["rank"] % len(STEP_LINESTYLES)],
                marker=marker)


def status_label(r):
    if r["status"] == "ok":
        return method_part(r)
    if r["status"] in ("diverged", "failed", "interrupted") and np.isfinite(r["t_reached"]):
        if np.isfinite(r["period"]):
            return f"{method_part(r)}: {r['status']} at t = {r['t_reached'] / r['period']:.4g} T"
        return f"{method_part(r)}: {r['status']} at t = {r['t_reached']:.4g}"  # its own units
    return f"{method_part(r)}: {r['status']}"


def end_mark(ax, r, x, y, colour, marker):
    """The mark at the point where a run that is not ok stopped."""
    if r["status"] == "swamped":
        ax.plot([x], [y], marker=marker, ms=8, mfc="none", mec=colour, mew=1.6, ls="none", zorder=5,
                gid=f"end/{r['status']}/{r['id']}")
    elif r["status"] in STATUS_MARK:
        ax.plot([x], [y], marker=STATUS_MARK[r["status"]], ms=10, color=colour, mec="black", mew=0.6,
                ls="none", zorder=5, gid=f"end/{r['status']}/{r['id']}")


def status_key(statuses):
    """Legend entries (grey) explaining the marks of the statuses present."""
    handles = []
    for s in ("diverged", "failed", "interrupted", "swamped"):
        if s in statuses:
            m = STATUS_MARK.get(s, "o")
            handles.append(Line2D([], [], ls="none", marker=m, ms=8, color="0.4",
                                  mfc="none" if s == "swamped" else "0.4", label=STATUS_WORDS[s]))
    return handles


def legend_outside(ax, handles, title=None):
    ax.legend(handles=handles, fontsize=7, title=title, title_fontsize=7, loc="upper left",
              bbox_to_anchor=(1.01, 1.0), borderaxespad=0.0, frameon=False)


SAVED = []  # every file written so far, removed again if a later plot fails


def save(fig, out, formats):
    written = []
    for fmt in formats:
        path = f"{out}.{fmt}"
        # SVG text stays text (searchable, editable), not glyph outlines
        with matplotlib.rc_context({"svg.fonttype": "none"}):
            fig.savefig(path, dpi=100)
        written.append(path)
        SAVED.append(path)
    plt.close(fig)
    return written


# ---------------------------------------------------------------------------------------
# Energy error against time


def plot_energy(variant, runs, out, formats):
    fig, ax = plt.subplots(figsize=(9.5, 4.8))
    handles = []
    for r in sorted(runs, key=lambda r: (r["method"], r["rank"])):
        st = run_line_style(r)
        t = r["time"] / r["time_unit"]
        label = status_label(r)
        if len(t) == 0:
            handles.append(Line2D([], [], color=st["color"], ls="none", marker=st["marker"], mfc="none",
                                  label=label + " (no stored series)"))
            continue
        peak = np.maximum(np.abs(r["dE_min"]), np.abs(r["dE_max"]))
        peak = np.where(peak > 0, peak, np.nan)  # dE = 0 over a whole bucket: no point on a log axis
        # Where dE keeps one sign in a bucket, |dE| lies between the bucket's min and max of
        # |dE|: that is the band. Where it changes sign, |dE| passes (near) 0 and has no
        # lower bound a log axis can show: no band there, only the peak.
        one_sign = r["dE_min"] * r["dE_max"] > 0
        low = np.where(one_sign, np.minimum(np.abs(r["dE_min"]), np.abs(r["dE_max"])), np.nan)
        (line,) = ax.plot(t, peak, color=st["color"], ls=st["ls"], lw=1.1, marker=st["marker"], ms=4,
                          markevery=every(t, peak), label=label, zorder=3,
                          gid=f"line/{r['status']}/{r['id']}")
        if one_sign.any():
            ax.fill_between(t, low, peak, where=one_sign, color=st["color"], alpha=0.12, lw=0, zorder=1,
                            gid=f"band/{r['id']}")
        handles.append(line)
        if r["status"] != "ok":
            x, y = t[-1], peak[-1]
            if r["status"] in ("diverged", "failed", "interrupted") and np.isfinite(r["t_reached"]):
                x = r["t_reached"] / r["time_unit"]
                if np.isfinite(r["max_energy_error"]) and r["max_energy_error"] > 0:
                    y = max(r["max_energy_error"], np.nanmax(peak) if np.isfinite(peak).any() else 0)
                ax.plot([t[-1], x], [peak[-1], y], color=st["color"], ls=":", lw=1, zorder=3)
            end_mark(ax, r, x, y, st["color"], st["marker"])
    ax.set_xscale("log")
    ax.set_yscale("log")
    peaks = [p for r in runs if len(r["time"]) for p in np.maximum(np.abs(r["dE_min"]), np.abs(r["dE_max"]))
             if p > 0 and np.isfinite(p)] + [r["max_energy_error"] for r in runs if r["status"] != "ok"
                                             and np.isfinite(r["max_energy_error"]) and r["max_energy_error"] > 0]
    if peaks:
        ax.set_ylim(10 ** (np.floor(np.log10(min(peaks))) - 1), 10 ** (np.ceil(np.log10(max(peaks))) + 0.3))
    ax.set_xlabel("time / period T" if all(np.isfinite(r["period"]) for r in runs)
                  else own_time_label(runs) + ": the problem has no closed-form period")
    ax.set_ylabel("|dE| = |H - H0| / E scale")
    ax.set_title(f"{variant}: energy error", fontsize=10)
    ax.grid(True, which="major", lw=0.3, alpha=0.5)
    ax.text(0.0, -0.16, "line: largest |dE| in each stored bucket; band: the bucket's min..max of |dE|, "
            "drawn only where dE keeps one sign in the bucket\n(where it changes sign |dE| passes near 0, "
            "which a log axis cannot show). The axis spans the lines; a band reaching the bottom edge "
            "continues below it.", transform=ax.transAxes, fontsize=7, va="top")
    legend_outside(ax, handles + status_key({r["status"] for r in runs}), title="run (method-step)")
    fig.tight_layout()
    return save(fig, out, formats)


# ---------------------------------------------------------------------------------------
# Phase error against time


def every(x, y):
    """Markers on about 8 points of a long line; matplotlib's fraction form fails on a
    line with no finite point (a damaged file's NaN series): none then."""
    return 0.12 if (np.isfinite(x) & np.isfinite(y)).sum() > 8 else None


def phase_linthresh(runs):
    """The linear part of the symmetric log axis, from the data: a decade below the
    smallest final |phase error| of any run, so every curve reaches the logarithmic part
    and no empty decades sit between zero and the data."""
    ends = [np.nanmax(np.abs(r["phase_error"])) for r in runs
            if np.isfinite(r["phase_error"]).any()]
    ends = [e for e in ends if np.isfinite(e) and e > 0]
    if not ends:
        return 1.0
    return 10.0 ** (np.floor(np.log10(min(ends))) - 1)


def plot_phase(variant, runs, out, formats):
    fig, ax = plt.subplots(figsize=(9.5, 4.8))
    handles = []
    lo, hi = 0.0, 0.0
    for r in sorted(runs, key=lambda r: (r["method"], r["rank"])):
        st = run_line_style(r)
        label = status_label(r)
        t, ph = r["crossing_time"] / r["period"], r["phase_error"]
        if not (np.isfinite(t) & np.isfinite(ph)).any():
            handles.append(Line2D([], [], color=st["color"], ls="none", marker=st["marker"], mfc="none",
                                  label=label + " (no section crossing)"))
            continue
        (line,) = ax.plot(t, ph, color=st["color"], ls=st["ls"], lw=1.1, marker=st["marker"], ms=4,
                          markevery=every(t, ph), label=label, zorder=3,
                          gid=f"line/{r['status']}/{r['id']}")
        handles.append(line)
        fin = ph[np.isfinite(ph)]
        if len(fin):
            lo, hi = min(lo, fin.min()), max(hi, fin.max())
        if r["status"] != "ok":
            end_mark(ax, r, t[-1], ph[-1], st["color"], st["marker"])
    lin = phase_linthresh(runs)
    ax.set_xscale("log")
    ax.set_yscale("symlog", linthresh=lin, linscale=0.5)
    # the axis ends a little beyond the data on each side, and at least at +-linthresh
    ax.set_ylim(min(lo * 2, -lin), max(hi * 2, lin))
    ax.axhline(0, color="0.5", lw=0.6)
    ax.axhspan(-lin, lin, color="0.92", lw=0, zorder=0)
    ax.set_xlabel("time / period T (at each kept section crossing)")
    ax.set_ylabel("phase error 2 pi (t_n - t_n,exact) / T  (rad)")
    ax.set_title(f"{variant}: phase error (> 0: behind the exact orbit)", fontsize=10)
    ax.grid(True, which="major", lw=0.3, alpha=0.5)
    ax.text(0.0, -0.16, f"symmetric log axis: linear within \u00b1{lin:g} rad (grey), logarithmic beyond",
            transform=ax.transAxes, fontsize=7, va="top")
    legend_outside(ax, handles + status_key({r["status"] for r in runs}), title="run (method-step)")
    fig.tight_layout()
    return save(fig, out, formats)


# ---------------------------------------------------------------------------------------
# Work against precision: cost per period against the error, every run a point, the runs
# of a sweep joined in step order (through their ok points only).

COSTS = {
    "force": ("force_evals_per_period", "force evaluations per period"),
    "time": ("seconds_per_period", "wall seconds per period"),
}
ERRORS = {
    "energy": ("max_energy_error", "max |dE| over the run"),
    "phase": ("phase_error_per_period", "|phase error per period| (rad)"),
}


def wp_point(r, cost, error):
    x = r[ERRORS[error][0]]
    x = abs(x) if error == "phase" else x
    y = r[COSTS[cost][0]]
    ok = np.isfinite(x) and x > 0 and np.isfinite(y) and y > 0
    return (x, y) if ok else None


def sweep_styles(runs, sweeps):
    """The sweeps with runs in this variant, each with its line style (rank among the
    sweeps of its method, in name order): [(name, [runs in step order], ls)]."""
    by_id = {r["id"]: r for r in runs}
    out, count = [], {}
    for name in sorted(sweeps):
        rs = [by_id[i] for i in sweeps[name] if i in by_id]
        if rs:
            k = count.get(rs[0]["method"], 0)
            count[rs[0]["method"]] = k + 1
            out.append((name, rs, STEP_LINESTYLES[k % len(STEP_LINESTYLES)]))
    return out


def plain_log_labels(ax):
    """Cost axis labels as plain numbers (50, 100, 200), with 2, 3 and 5 times a power of
    ten labelled too when the axis spans less than two decades."""
    def minor(v, _):
        lo, hi = ax.get_ylim()
        mantissa = round(v / 10 ** np.floor(np.log10(v) + 1e-9))
        return f"{v:g}" if hi / lo < 100 and mantissa in (2, 3, 5) else ""
    ax.yaxis.set_major_formatter(mticker.FuncFormatter(lambda v, _: f"{v:g}"))
    ax.yaxis.set_minor_formatter(mticker.FuncFormatter(minor))


def work_panel(ax, runs, sweeps, cost, error, target):
    """One panel; returns the chosen run (the cheapest ok run meeting the target) or None."""
    for name, rs, ls in sweep_styles(runs, sweeps):
        pts = [wp_point(r, cost, error) for r in rs if r["status"] == "ok"]
        pts = [p for p in pts if p]
        if len(pts) >= 2:
            ax.plot([p[0] for p in pts], [p[1] for p in pts], color=method_style(rs[0]["method"])[0],
                    ls=ls, lw=1.1, zorder=2, gid=f"sweep/{name}")
    not_drawn = []
    for r in runs:
        p = wp_point(r, cost, error)
        if p is None:
            not_drawn.append(f"{method_part(r)} ({r['status']})")
            continue
        colour, marker = method_style(r["method"])
        gid = f"point/{r['status']}/{r['id']}"
        if r["status"] == "ok":
            ax.plot([p[0]], [p[1]], ls="none", marker=marker, ms=7, color=colour, mec="white", mew=0.5,
                    zorder=3, gid=gid)
        elif r["status"] == "swamped":
            ax.plot([p[0]], [p[1]], ls="none", marker=marker, ms=7, mfc="none", mec=colour, mew=1.5,
                    zorder=3, gid=gid)
        else:
            ax.plot([p[0]], [p[1]], ls="none", marker=STATUS_MARK.get(r["status"], "x"), ms=8,
                    color=colour, mec="black", mew=0.5, zorder=3, gid=gid)
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.margins(0.08)
    plain_log_labels(ax)
    ax.set_xlabel(ERRORS[error][1], fontsize=8)
    ax.set_ylabel(COSTS[cost][1], fontsize=8)
    ax.tick_params(which="both", labelsize=7)
    ax.grid(True, which="major", lw=0.3, alpha=0.5)
    chosen = None
    if target is not None:
        ax.axvline(target, color="black", ls="--", lw=0.9, zorder=1)
        meeting = [r for r in runs if r["status"] == "ok" and wp_point(r, cost, error)
                   and wp_point(r, cost, error)[0] <= target]
        if meeting:
            # equal cost (the same force evaluations per period): the smaller error wins
            chosen = min(meeting, key=lambda r: (wp_point(r, cost, error)[1], wp_point(r, cost, error)[0],
                                                 r["id"]))
            x, y = wp_point(chosen, cost, error)
            ax.plot([x], [y], ls="none", marker="o", ms=15, mfc="none", mec="black", mew=1.4, zorder=4,
                    gid=f"chosen/{chosen['id']}")
            ax.annotate(method_part(chosen), (x, y), xytext=(10, -4), textcoords="offset points", fontsize=7,
                        va="top")
        else:
            ax.text(0.02, 0.97, "no ok run meets the target", transform=ax.transAxes, fontsize=7,
                    va="top", color="black")
    if not_drawn:
        ax.text(0.02, 0.02, "no value, not drawn: " + ", ".join(not_drawn), transform=ax.transAxes,
                fontsize=6, va="bottom", wrap=True)
    return chosen


def work_legend_handles(runs, sweeps, targets):
    handles = []
    for m in sorted({r["method"] for r in runs}):
        colour, marker = method_style(m)
        handles.append(Line2D([], [], ls="none", marker=marker, color=colour, ms=6, label=m))
    for name, rs, ls in sweep_styles(runs, sweeps):
        m = rs[0]["method"]
        first, last = (method_part(r)[len(m) + 1:] for r in (rs[0], rs[-1]))
        handles.append(Line2D([], [], ls=ls, color=method_style(m)[0], lw=1.1,
                              label=f"sweep of {m}:\n{first} .. {last}"))
    handles += status_key({r["status"] for r in runs})
    if any(t is not None for t in targets):
        handles.append(Line2D([], [], ls="--", color="black", lw=0.9, label="target"))
        handles.append(Line2D([], [], ls="none", marker="o", ms=11, mfc="none", mec="black", mew=1.4,
                              label="cheapest ok run meeting it"))
    seen, unique = set(), []
    for h in handles:
        if h.get_label() not in seen:
            seen.add(h.get_label())
            unique.append(h)
    return unique


def report_chosen(variant, cost, error, target, chosen):
    what = f"chosen: {variant}: {ERRORS[error][1]} <= {target:g}, cheapest by {COSTS[cost][1]}: "
    if chosen is None:
        print(what + "none")
    else:
        print(what + f"{chosen['id']} ({chosen[COSTS[cost][0]]:.6g})")


def plot_work(variant, runs, sweeps, targets, out, formats):
    """Per variant: force evaluations and wall seconds per period (rows) against max |dE|
    and |phase error per period| (columns)."""
    fig, axes = plt.subplots(2, 2, figsize=(11, 7))
    for i, cost in enumerate(COSTS):
        for j, error in enumerate(ERRORS):
            chosen = work_panel(axes[i, j], runs, sweeps, cost, error, targets[error])
            if targets[error] is not None:
                report_chosen(variant, cost, error, targets[error], chosen)
    fig.suptitle(f"{variant}: cost against error (wall seconds: this machine, this load)", fontsize=10)
    fig.tight_layout(rect=(0, 0, 0.78, 0.96))
    fig.legend(handles=work_legend_handles(runs, sweeps, targets.values()), fontsize=7, loc="upper left",
               bbox_to_anchor=(0.79, 0.93), frameon=False)
    return save(fig, out, formats)


def plot_cost(groups, sweeps, targets, out, formats):
    """Every variant in one figure: force evaluations per period against max |dE|."""
    n = len(groups)
    cols = min(3, n)
    rows = (n + cols - 1) // cols
    fig, axes = plt.subplots(rows, cols, figsize=(3.6 * cols + 2.6, 3.2 * rows + 0.5), squeeze=False)
    for ax, (variant, runs) in zip(axes.flat, groups.items()):
        work_panel(ax, runs, sweeps, "force", "energy", targets["energy"])
        ax.set_title(variant, fontsize=9)
    for ax in list(axes.flat)[n:]:
        ax.axis("off")
    fig.suptitle("force evaluations per period against max |dE|, every problem variant", fontsize=10)
    right = 3.6 * cols / (3.6 * cols + 2.6)
    fig.tight_layout(rect=(0, 0, right, 0.96))
    all_runs = [r for rs in groups.values() for r in rs]
    fig.legend(handles=work_legend_handles(all_runs, sweeps, [targets["energy"]]), fontsize=7,
               loc="upper left", bbox_to_anchor=(right, 0.93), frameon=False)
    return save(fig, out, formats)


def positive(v):
    try:
        x = float(v)
    except ValueError:
        x = float("nan")
    if not (np.isfinite(x) and x > 0):
        raise argparse.ArgumentTypeError(f"expected a positive number, got {v!r}")
    return x


# The surface of section's axes of the built-in problems that keep one (results/README.md,
# section_q and section_p).
SECTION_AXES = {
    "henon_heiles": ("y (at x = 0, p_x > 0)", "p_y"),
    "kepler": ("x (at y = 0, going up)", "p_x"),
}


# A part of a units text that names a unit of time ("days", "yr", "1000 years", ...)
TIME_UNIT = re.compile(r"(\d+(\.\d*)?\s*)?(julian\s+)?(s|secs?|seconds?|min|minutes?|h|hrs?|hours?|d|"
                       r"days?|weeks?|yrs?|years?|kyrs?|myrs?|gyrs?)", re.IGNORECASE)


def own_time_label(runs):
    """The time axis of a problem without a closed-form period: in the unit of time the
    suite's units text names (nbody's `units`: "AU, days, solar masses" gives days) when
    exactly one of its comma-separated parts is a unit of time, else the whole text as
    units, else the suite's own."""
    units = sorted({r.get("units", "") for r in runs} - {""})
    if len(units) != 1:
        return "time (the suite's units)"
    times = [p.strip() for p in re.split(r"[,;]", units[0]) if TIME_UNIT.fullmatch(p.strip())]
    return f"time ({times[0]})" if len(times) == 1 else f"time (units: {units[0]})"


def plot_section(variant, runs, out, formats):
    """The surface of section of a problem without a closed-form period (Henon-Heiles):
    (y, p_y) at each kept crossing of x = 0, one panel per run, each run in its colour."""
    shown = [r for r in sorted(runs, key=lambda r: (r["method"], r["rank"])) if r["section"] is not None
             and len(r["section"][0])]
    if not shown:
        return []
    cols = min(3, len(shown))
    rows = (len(shown) + cols - 1) // cols
    fig, axes = plt.subplots(rows, cols, figsize=(3.6 * cols, 3.4 * rows), squeeze=False)
    for ax, r in zip(axes.flat, shown):
        st = run_line_style(r)
        ax.plot(r["section"][0], r["section"][1], ls="none", marker=".", ms=1.5, color=st["color"])
        ax.set_title(status_label(r), fontsize=8)
        q_name, p_name = SECTION_AXES.get(r["problem"], ("q (the coordinate the section does not "
                                                          "watch)", "its momentum p"))
        ax.set_xlabel(q_name, fontsize=7)
        ax.set_ylabel(p_name, fontsize=7)
        ax.tick_params(labelsize=7)
    for ax in list(axes.flat)[len(shown):]:
        ax.axis("off")
    fig.suptitle(f"{variant}: surface of section (one point a kept crossing)", fontsize=10)
    fig.tight_layout()
    return save(fig, out, formats)


def plot_invariants(variant, runs, out, formats):
    """The extra invariants' errors against time (log-log), one panel per invariant, of a
    problem without a closed-form period (nbody: momentum, angular momentum, centre of
    mass), each run in its colour and line style."""
    names = sorted({k for r in runs for k in r["invariants"]})
    if not names:
        return []
    fig, axes = plt.subplots(1, len(names), figsize=(4.2 * len(names), 3.8), squeeze=False)
    handles = []
    for ax, name in zip(axes.flat, names):
        for r in sorted(runs, key=lambda r: (r["method"], r["rank"])):
            series = r["invariants"].get(name)
            if series is None or len(series) == 0:
                continue
            st = run_line_style(r)
            y = np.abs(series)
            y = np.where(y > 0, y, np.nan)  # exactly 0: no point on a log axis
            (line,) = ax.plot(r["time"] / r["time_unit"], y, color=st["color"], ls=st["ls"], lw=1,
                              label=status_label(r))
            if name == names[0]:
                handles.append(line)
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_title(f"{name} error (unit-free)", fontsize=9)
        ax.set_xlabel(own_time_label(runs), fontsize=8)
        ax.grid(True, which="major", lw=0.3, alpha=0.5)
    legend_outside(axes.flat[-1], handles, title="run (method-step)")
    fig.suptitle(f"{variant}: invariants at bucket ends", fontsize=10)
    fig.tight_layout()
    return save(fig, out, formats)


def plot_global(variant, runs, out, formats):
    """The global error against time (log-log), each run in its colour and line style,
    when the runs measured one (an exact solution, or a reference trajectory: then the
    reference's error estimate is drawn too, grey and dotted, and a run whose estimate
    came within 1e-3 of its global error gets a vertical mark at reference_valid_until)."""
    rs = [r for r in runs if r["global_error"] is not None and len(r["global_error"]) > 0]
    if not rs:
        return []
    fig, ax = plt.subplots(figsize=(7.5, 4.2))
    handles = []
    reference = []
    for r in sorted(rs, key=lambda r: (r["method"], r["rank"])):
        st = run_line_style(r)
        t = r["time"] / r["time_unit"]
        y = np.where(r["global_error"] > 0, r["global_error"], np.nan)
        (line,) = ax.plot(t, y, color=st["color"], ls=st["ls"], lw=1, label=status_label(r),
                          gid=f"line/{r['status']}/{r['id']}")
        handles.append(line)
        shown = np.flatnonzero(np.isfinite(y))
        if r["status"] != "ok" and len(shown):  # marked as in the other plots, at its last point
            end_mark(ax, r, t[shown[-1]], y[shown[-1]], st["color"], st["marker"])
        until = r["reference_valid_until"]
        if np.isfinite(until) and len(t) and until < r["time"][-1]:
            ax.axvline(until / r["time_unit"], color=st["color"], ls=":", lw=0.8)
        if r["reference_error"] is not None and not reference:
            e = np.where(r["reference_error"] > 0, r["reference_error"], np.nan)
            reference += ax.plot(t, e, color="0.5", ls=":", lw=1,
                                 label="reference's error estimate")
    ax.set_xscale("log")
    ax.set_yscale("log")
    unit = rs[0]["time_unit"]
    ax.set_xlabel("time / period" if unit != 1.0 else own_time_label(rs), fontsize=8)
    ax.set_ylabel("global error: distance in phase space\n"
                  "sqrt(|dq|^2 + |dp|^2), positions and\nmomenta together", fontsize=8)
    ax.grid(True, which="major", lw=0.3, alpha=0.5)
    against = "reference trajectory" if any(r["reference_error"] is not None for r in rs) \
        else "exact solution"
    ax.set_title(f"{variant}: global error against the {against}", fontsize=10)
    legend_outside(ax, handles + reference + status_key({r["status"] for r in rs}),
                   title="run (method-step)")
    fig.tight_layout()
    return save(fig, out, formats)


def main():
    ap = Arguments(description=__doc__.splitlines()[0])
    ap.add_argument("results")
    ap.add_argument("-o", "--outdir", default=None, help="folder for the PNGs (default: beside the file)")
    ap.add_argument("--target-energy", type=positive, default=None, metavar="X",
                    help="draw max |dE| = X on the cost plots and ring the cheapest ok run at or below it")
    ap.add_argument("--target-phase", type=positive, default=None, metavar="Y",
                    help="the same for |phase error per period| = Y (radians)")
    ap.add_argument("--format", choices=("png", "svg", "both"), default="png",
                    help="image format (default png)")
    a = ap.parse_args()
    formats = ("png", "svg") if a.format == "both" else (a.format,)
    targets = {"energy": a.target_energy, "phase": a.target_phase}
    outdir = a.outdir or os.path.dirname(os.path.abspath(a.results))
    runs, sweeps = read(a.results)   # all of it before anything is written
    try:
        os.makedirs(outdir, exist_ok=True)
    except OSError as e:
        refuse(f"cannot make the folder {outdir}: {e.strerror}")
    try:
        written = plot_all(runs, sweeps, targets, outdir, formats)
    except Exception as e:  # a file that reads but cannot be drawn: one line, no half
        for path in SAVED:
            try:
                os.remove(path)
            except OSError:
                pass
        refuse(f"cannot plot {a.results}: {type(e).__name__}: {str(e).splitlines()[0] if str(e) else ''}")
    for w in written:
        print(w)


def plot_all(runs, sweeps, targets, outdir, formats):
    groups = {}
    for r in runs:
        groups.setdefault(r["variant"], []).append(r)
    written = []
    for variant, rs in groups.items():
        assign_ranks(rs)
        written += plot_energy(variant, rs, os.path.join(outdir, f"{variant}-energy"), formats)
        written += plot_global(variant, rs, os.path.join(outdir, f"{variant}-global"), formats)
        if not all(np.isfinite(r["period"]) for r in rs):
            # no closed-form period (nbody, henon_heiles): no phase error, no cost per
            # period; the surface of section where the runs keep one
            written += plot_section(variant, rs, os.path.join(outdir, f"{variant}-section"), formats)
            written += plot_invariants(variant, rs, os.path.join(outdir, f"{variant}-invariants"), formats)
            continue
        written += plot_phase(variant, rs, os.path.join(outdir, f"{variant}-phase"), formats)
        written += plot_work(variant, rs, sweeps, targets, os.path.join(outdir, f"{variant}-work"), formats)
    periodic = {v: rs for v, rs in groups.items() if all(np.isfinite(r["period"]) for r in rs)}
    if periodic:
        written += plot_cost(periodic, sweeps, targets, os.path.join(outdir, "cost"), formats)
    return written


if __name__ == "__main__":
    main()

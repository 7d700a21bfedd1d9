#!/usr/bin/python3
"""Problems written in the suite as formulas ({potential: FORMULA, ...}), driven through
the driftmark under test and read back with h5py:
- `-cos(q)` against the built-in pendulum: the period to 1e-14, 1e-13 next to the
  separatrix (both are computed: the built-in's from K(m), ours by quadrature), and at
  the same h the same trajectory bit for bit (the same arithmetic: libmatheval's
  derivative of -cos(q) simplifies to sin(q), and the generated code runs the same fused
  loop);
- a quartic against the built-in double well, the Morse formula against the built-in
  Morse (periods to 1e-14, energy errors to rounding);
- V = q^4/4 at amplitude A: T = 4 K(1/2) / A (x = A cn(A t | 1/2), common practice),
  K from mpmath's ellipk;
- a cart on a bump, V = g (x^2/8 + b exp(-4 x^2)) (found by a tester: periods off by up
  to 3e-12), against mpmath's tanh-sinh quadrature of the period integral at 40 digits;
- Henon-Heiles (M. Henon, C. Heiles, Astron. J. 69 (1964) 73: V = (x^2 + y^2)/2 + x^2 y -
  y^3/3) at E ~ 0.08 runs, and its energy error falls at Verlet's order 2 and Yoshida's 4;
- the evaluator fallback (DRIFTMARK_FORMULA_CC empty, or a compiler that fails) gives one
  warning line and the compiled results; the cache compiles a sweep once;
- every refusal: one line FILE:LINE:COLUMN: ..., exit 2, no file written.

usage: check_formula.py PATH/TO/driftmark   (run from the build directory by CTest)
"""
import math
import os
import sys
import tempfile

import h5py
import mpmath as mp
import numpy as np

import checklib
from checklib import check

EXE = os.path.abspath(sys.argv[1])


def run_suite(tmp, name, text, env_extra=None, expect=0):
    path = os.path.join(tmp, name + ".yaml")
    with open(path, "w") as f:
        f.write(f"name: {name}\noutput: {name}.h5\n" + text)
    env = dict(os.environ, XDG_CACHE_HOME=os.path.join(tmp, "cache"))
    env.pop("DRIFTMARK_FORMULA_CC", None)
    env.update(env_extra or {})
    import subprocess
    p = subprocess.run([EXE, "run", path, "--force"], capture_output=True, text=True, cwd=tmp,
                       env=env)
    check(p.returncode == expect, f"{name}: exit {p.returncode}, expected {expect}: {p.stderr}")
    return p, os.path.join(tmp, name + ".h5")


def runs(h5):
    f = h5py.File(h5, "r")
    return f, f["runs"]


with tempfile.TemporaryDirectory() as tmp:
    # ---- the pendulum: period and trajectory ----
    p, out = run_suite(tmp, "pend", """horizon: {time: 2000}
buckets: 64
problems:
  - {problem: pendulum, amplitude: [0.5, 2.5, 3.1]}
  - {potential: "-cos(q)", q0: [0.5, 2.5, 3.1], name: swing}
methods:
  - {method: verlet, h: 0.05}
  - {method: rk4, h: 0.1}
""")
    f, r = runs(out)
    for a in ["0.5", "2.5", "3.1"]:
        for m in ["verlet-h0.05", "rk4-h0.1"]:
            b, s = r[f"pendulum-amplitude{a}.{m}"], r[f"swing-q0{a}.{m}"]
            rel = abs(b.attrs["period"] - s.attrs["period"]) / b.attrs["period"]
            # at 3.1, next to the separatrix, V is nearly flat at the turning points: the
            # start's energy, rounded, moves the period ~100 times more there
            check(rel < (1e-14 if a != "3.1" else 1e-13),
                  f"pendulum {a}: period relative difference {rel}")
            if m.startswith("verlet"):
                print(f"pendulum amplitude {a}: period relative difference {rel:.2g}")
            for k in ["energy_error", "energy_error_min", "energy_error_max", "crossing_time"]:
                check(np.array_equal(b[k][()], s[k][()]), f"pendulum {a} {m}: {k} not bit for bit")
            check(s.attrs["formula_code"] == "compiled", "the formula was compiled")
    check(p.stderr.count("compiled in") == 1, f"one compile for the sweep: {p.stderr}")
    f.close()

    # ---- the double well and Morse against the built-ins ----
    p, out = run_suite(tmp, "wells", """horizon: {periods: 200}
buckets: 64
problems:
  - {problem: double_well, energy: [-0.1, 0.3]}
  - {potential: "-a*q^2/2 + b*q^4/4", a: 1, b: 1, q0: 1, energy: [-0.1, 0.3], name: well}
  - {problem: morse, energy: 0.5, D: 2, alpha: 1.5}
  - {potential: "D*(1 - exp(-alpha*(q - xe)))^2", D: 2, alpha: 1.5, xe: 0, energy: 0.5,
     q0: 0.2, side: left, name: bond}
methods:
  - {method: verlet, h: 0.02}
""")
    f, r = runs(out)
    pairs = [("double_well-energy-0.1", "well-a1-b1-q01-energy-0.1"),
             ("double_well-energy0.3", "well-a1-b1-q01-energy0.3"),
             ("morse-D2-alpha1.5-energy0.5", "bond-D2-alpha1.5-xe0-q00.2-energy0.5")]
    for built, ours in pairs:
        b, s = r[built + ".verlet-h0.02"], r[ours + ".verlet-h0.02"]
        rel = abs(b.attrs["period"] - s.attrs["period"]) / b.attrs["period"]
        check(rel < 1e-14, f"{ours}: period relative difference {rel}")  # measured 6e-16
        eb, es = b["energy_error_max"][()], s["energy_error_max"][()]
        dif = np.max(np.abs(eb - es)) / np.max(np.abs(eb))
        print(f"{ours}: period {rel:.2g}, max dE relative difference {dif:.2g}")
        # the starts differ by an ulp (a closed form against a bisection to the last bit)
        # and V is rounded otherwise: the trajectories part by rounding, which grows
        check(dif < 1e-5, f"{ours}: energy error differs from the built-in's by {dif}")
    f.close()

    # ---- the pure quartic: T = 4 K(1/2) / A (common practice; mpmath ellipk) ----
    p, out = run_suite(tmp, "quartic", """horizon: {periods: 10}
buckets: 16
problems:
  - {potential: "q^4/4", q0: [0.3, 1, 7.5]}
methods:
  - {method: verlet, steps_per_period: 256}
""")
    f, r = runs(out)
    mp.mp.dps = 30
    for A in ["0.3", "1", "7.5"]:
        T = 4 * mp.ellipk(mp.mpf(1) / 2) / mp.mpf(A)
        got = r[f"formula-q0{A}.verlet-n256"].attrs["period"]
        rel = abs(mp.mpf(got) - T) / T
        print(f"quartic A = {A}: period {got!r}, mpmath {mp.nstr(T, 17)}: {mp.nstr(rel, 3)}")
        check(rel < 1e-14, f"quartic A = {A}: period relative error {rel}")
    f.close()

    # ---- the cart on a bump: T = 2 * integral of dx / sqrt(2 (E - V)) between the
    # turning points (mass 1), mpmath tanh-sinh at 40 digits, turning points by findroot,
    # at the run's own energy (the start at rest: E = V(q+) as the formula rounds it) ----
    p, out = run_suite(tmp, "cart", """horizon: {periods: 1}
problems:
  - {potential: "g*(x^2/8 + bump*exp(-4*x^2))", coordinates: [x], g: 9.81,
     bump: [0.05, 0.2, 0.3], energy: 6.0, name: cart}
methods:
  - {method: verlet, steps_per_period: 64}
""")
    f, r = runs(out)
    mp.mp.dps = 40
    for b in ["0.05", "0.2", "0.3"]:
        run = r[f"cart-g9.81-bump{b}-energy6.verlet-n64"]
        E, g, bump = (mp.mpf(float(run.attrs[k])) for k in ("energy", "param_g", "param_bump"))
        V = lambda x: g * (x**2 / 8 + bump * mp.exp(-4 * x**2))
        qm, qp = (mp.findroot(lambda x: V(x) - E, x0) for x0 in (-2.2, 2.2))
        T = 2 * mp.quad(lambda x: 1 / mp.sqrt(2 * (E - V(x))), [qm, 0, qp])
        got = run.attrs["period"]
        rel = abs(mp.mpf(got) - T) / T
        print(f"cart bump {b}: period {got!r}, mpmath {mp.nstr(T, 17)}: {mp.nstr(rel, 3)}")
        check(rel < 2e-15, f"cart bump {b}: period relative error {rel}")  # measured 3e-16
    f.close()

    # ---- Henon-Heiles: two coordinates, energy error at the method's order ----
    p, out = run_suite(tmp, "hh", """horizon: {time: 200}
buckets: 64
problems:
  - potential: "(x^2 + y^2)/2 + x^2*y - y^3/3"
    coordinates: [x, y]
    q0: [0, 0.1]
    p0: [0.39, 0]
    name: galaxy
methods:
  - {method: verlet, h: [0.04, 0.02, 0.01]}
  - {method: yoshida4, h: [0.08, 0.04, 0.02]}
""")
    f = h5py.File(out, "r")
    orders = {name: f["sweeps"][name].attrs["energy_order"] for name in f["sweeps"]}
    print("Henon-Heiles energy orders:", orders)
    check(abs(orders["galaxy.verlet"] - 2) < 0.15, f"Henon-Heiles verlet order {orders}")
    check(abs(orders["galaxy.yoshida4"] - 4) < 0.3, f"Henon-Heiles yoshida4 order {orders}")
    # two coordinates and no period given: no period is made up, so no phase figure
    # either; the time between the section's crossings is measured instead
    for rid, g in f["runs"].items():
        check(np.isnan(g.attrs["period"]) and np.isnan(g.attrs["phase_error_per_period"]),
              f"{rid}: no period, no phase: {g.attrs['period']} {g.attrs['phase_error_per_period']}")
        check(np.isfinite(g.attrs["period_measured"]) and g.attrs["period_measured"] > 0,
              f"{rid}: the crossings' period measured: {g.attrs['period_measured']}")
    f.close()
    # ... so a horizon in periods is refused, in one line at the horizon
    p, out = run_suite(tmp, "hh-periods", """horizon: {periods: 10}
problems:
  - {potential: "x^2 + y^2", coordinates: [x, y], q0: [1, 0]}
methods:
  - {method: verlet, h: 0.01}
""", expect=2)
    err = [l for l in p.stderr.strip().splitlines() if "compiled" not in l]
    check(len(err) == 1 and f"{tmp}/hh-periods.yaml:3:" in err[0]
          and "no closed-form period" in err[0] and not os.path.exists(out),
          f"horizon in periods without a period: {p.stderr}")

    # ---- 64 coordinates: a chain of unit masses and springs, fixed at both ends, started
    # in its lowest normal mode (q_j = 0, p_j = sin(j pi / 65)): the mode's period
    # T = 2 pi / w, w = 2 sin(pi / 130) (common practice), and Verlet's numerical
    # frequency on a linear system, w~ = (2 / h) arcsin(w h / 2) (Hairer, Lubich, Wanner,
    # Geometric Numerical Integration, 2006, ch. I, from memory), so its measured period
    # error is w / w~ - 1 ----
    N = 64
    coords = [f"x{j}" for j in range(1, N + 1)]
    terms = [f"{coords[0]}^2/2"] + [f"({coords[j]} - {coords[j - 1]})^2/2" for j in range(1, N)]
    terms.append(f"{coords[-1]}^2/2")
    w = 2 * np.sin(np.pi / (2 * (N + 1)))
    h = 0.05
    p0 = [np.sin(j * np.pi / (N + 1)) for j in range(1, N + 1)]
    p, out = run_suite(tmp, "chain", f"""horizon: {{periods: 20}}
buckets: 16
problems:
  - potential: "{' + '.join(terms)}"
    coordinates: [{', '.join(coords)}]
    q0: [{', '.join(['0'] * N)}]
    p0: [{', '.join(repr(x) for x in p0)}]
    period: {2 * np.pi / w!r}
    name: chain
methods:
  - {{method: verlet, h: {h}}}
""")
    with h5py.File(out) as f:
        g = f["runs"]["chain.verlet-h0.05"]
        expected = w / ((2 / h) * np.arcsin(w * h / 2)) - 1
        got = g.attrs["period_rel_error"]
        print(f"chain of {N}: period error {got:.6g}, Verlet's on the mode {expected:.6g}; "
              f"max |dE| {g.attrs['max_energy_error']:.3g}")
        check(abs(got - expected) < 1e-3 * abs(expected), f"chain period error {got} against {expected}")
        check(g.attrs["formula_code"] == "compiled", "chain compiled")

    # ---- a kinetic formula: T = p^2/2 with V = q^2/2 is the harmonic oscillator, started
    # on its section (q = 0 going up) so the crossings come at multiples of its period 2 pi:
    # Verlet's period error is w / w~ - 1 as above (w = 1) ----
    p, out = run_suite(tmp, "spring", """horizon: {periods: 50}
buckets: 16
problems:
  - {potential: "q^2/2", kinetic: "p^2/2", q0: 0, p0: 1, period: 6.283185307179586,
     name: spring}
methods:
  - {method: verlet, h: 0.05}
""")
    with h5py.File(out) as f:
        g = f["runs"]["spring-q00-p01.verlet-h0.05"]
        expected = 1 / ((2 / 0.05) * np.arcsin(0.05 / 2)) - 1
        got = g.attrs["period_rel_error"]
        print(f"kinetic formula: period error {got:.6g}, Verlet's {expected:.6g}")
        check(abs(got - expected) < 1e-3 * abs(expected), f"spring period error {got} against {expected}")
        check(g.attrs["formula_kinetic"] == "p^2/2", "formula_kinetic recorded")

    # ---- the energy scale is a property of the system: adding a constant to V (or to a
    # kinetic formula) moves no energy figure. E_scale = H0 - T_min - V_min by hand: V
    # below is a positive definite quadratic form plus c (V_min = c, at the origin), T is
    # p^2/2 or cosh(p) + k (T_min = 1 + k at p = 0); V unbounded below (a free fall) has no
    # minimum and falls back to |H0|. ----
    p, out = run_suite(tmp, "scale", """horizon: {time: 100}
buckets: 16
problems:
  - {potential: "x^2/2 + y^2/2 + c", coordinates: [x, y], q0: [0, 0], p0: [1, 0.5],
     c: [0, 100, -0.62499], name: round}
  - {potential: "x^2/2 + 2*y^2 + x*y/2 + c", coordinates: [x, y], q0: [0.3, -0.2],
     p0: [1, 0.5], c: [0, -3, 100], name: skew}
  - {potential: "q^2/2 + c", kinetic: "cosh(p) + k", q0: 1, p0: 0.25, c: [0, 50],
     k: [0, -3], name: kin}
  - {potential: "x^2/2 - y", coordinates: [x, y], q0: [1, 0], p0: [0, 1], name: fall}
methods:
  - {method: verlet, h: 0.1}
""")
    with h5py.File(out) as f:
        g = f["runs"]
        by = {}
        for rid in g:
            a = g[rid].attrs
            fam = rid.split(".")[0].split("-")[0]
            by.setdefault(fam, []).append((rid, a["status"], a["energy_scale_rule"],
                                           a["energy_scale"], a["max_energy_error"]))
        want = {"round": ("H0 - V_min", 0.5 * (1 + 0.25)),
                "skew": ("H0 - V_min", 0.5 * (1 + 0.25) + 0.5 * 0.09 + 2 * 0.04 - 0.5 * 0.06),
                "kin": ("H0 - T_min - V_min", math.cosh(0.25) - 1 + 0.5)}
        for fam, (rule, scale) in want.items():
            rows = by.get(fam, [])
            check(len(rows) >= 2, f"scale: {fam}: runs {rows}")
            for rid, st, r, sc, de in rows:
                check(st == "ok" and r == rule and abs(sc / scale - 1) < 1e-12,
                      f"scale: {rid}: {st}, {r} {sc!r}, expected ok, {rule} {scale!r}")
                check(abs(de / rows[0][4] - 1) < 1e-9,
                      f"scale: {rid}: max |dE| {de!r} against {rows[0][0]}'s {rows[0][4]!r}")
            print(f"scale: {fam}: {len(rows)} runs, E_scale {rows[0][3]:.17g}, max |dE| "
                  + ", ".join(f"{x[4]:.6e}" for x in rows))
        fall = by.get("fall", [])
        check(len(fall) == 1 and fall[0][2] == "|H0|",
              f"scale: V unbounded below falls back to |H0|: {fall}")

    # ---- a start at a turning point of the watched coordinate (x at rest at its largest,
    # the default section through the start): the orbit only touches the section, so no
    # period is measured, and the note says why (found by a tester: it was left empty).
    # The same orbit with the section through the inside of its range is counted: x is a
    # harmonic oscillator of w = 1, period 2 pi (common practice) ----
    p, out = run_suite(tmp, "touch", """horizon: {time: 100}
buckets: 16
problems:
  - {potential: "x^2/2 + y^2/2", coordinates: [x, y], q0: [1, 0.5], p0: [0, 0.3], name: top}
  - {potential: "x^2/2 + y^2/2", coordinates: [x, y], q0: [1, 0.5], p0: [0, 0.3], name: mid,
     section: {coordinate: x, level: 0}}
  - {potential: "x^2/2 + y^2/2", coordinates: [x, y], kinetic: "p_x^2/2 + p_y^2/2",
     q0: [0, 0.5], p0: [1, 0.3], name: kin}
methods:
  - {method: verlet, h: 0.01}
""")
    with h5py.File(out) as f:
        for rid, g in f["runs"].items():
            a = g.attrs
            note = a["period_note"]
            note = note.decode() if isinstance(note, bytes) else str(note)
            print(f"touch: {rid}: period_measured {a['period_measured']!r}, note '{note}'")
            if rid.startswith("top"):
                check(np.isnan(a["period_measured"]) and "0 upward crossings" in note
                      and "turning point on the section" in note,
                      f"touch: {rid}: no period and a note: {a['period_measured']} '{note}'")
            else:
                check(abs(a["period_measured"] / (2 * np.pi) - 1) < 1e-4 and note == "",
                      f"touch: {rid}: period {a['period_measured']!r} '{note}'")

    # ---- the evaluator: forced (no compiler) and after a failed compile ----
    pend = """horizon: {time: 300}
buckets: 32
problems:
  - {potential: "-g*cos(q) + c*q^4", g: 1.5, c: 0.01, q0: 2.5, p0: 0.1, name: lamp}
methods:
  - {method: yoshida4, h: 0.05}
"""
    p, compiled = run_suite(tmp, "lamp", pend)
    p1, evaluated = run_suite(tmp, "lamp-ev", pend, {"DRIFTMARK_FORMULA_CC": ""})
    lines = [l for l in p1.stderr.splitlines() if "warning" in l]
    check(len(lines) == 1 and "evaluated by libmatheval" in lines[0], f"one warning: {p1.stderr}")
    p2, failed = run_suite(tmp, "lamp-fail", pend, {"DRIFTMARK_FORMULA_CC": "/bin/false"})
    check("failed on the generated C" in p2.stderr, f"compile failure named: {p2.stderr}")
    with h5py.File(compiled) as a, h5py.File(evaluated) as b, h5py.File(failed) as c:
        x, y, z = (g["runs"]["lamp-g1.5-c0.01-q02.5-p00.1.yoshida4-h0.05"] for g in (a, b, c))
        check(x.attrs["formula_code"] == "compiled" and y.attrs["formula_code"] == "evaluated"
              and z.attrs["formula_code"] == "evaluated", "formula_code")
        for k in ["energy_error", "energy_error_max", "crossing_time"]:
            d = np.max(np.abs(x[k][()] - y[k][()]))
            check(np.array_equal(x[k][()], y[k][()]) or d < 1e-13,
                  f"evaluated {k} differs from compiled by {d}")
            check(np.array_equal(y[k][()], z[k][()]), f"fallbacks differ in {k}")
    p3, _ = run_suite(tmp, "lamp", pend)
    check("from the cache" in p3.stderr, f"second run takes the cached object: {p3.stderr}")
    # a damaged cached object is compiled again (not given up for the evaluator for good)
    import glob
    for so in glob.glob(os.path.join(tmp, "cache", "driftmark", "formula-*.so")):
        with open(so, "w") as f:
            f.write("damaged\n")
    p4, again = run_suite(tmp, "lamp-again", pend)
    p5, _ = run_suite(tmp, "lamp-again", pend)
    with h5py.File(again) as g:
        code = g["runs"]["lamp-g1.5-c0.01-q02.5-p00.1.yoshida4-h0.05"].attrs["formula_code"]
    check("compiling it again" in p4.stderr and code == "compiled"
          and "from the cache" in p5.stderr and "warning" not in p4.stderr + p5.stderr,
          f"a damaged cached object is rebuilt: {p4.stderr!r} {p5.stderr!r} {code}")

    # ---- refusals: one line naming the place, exit 2, nothing written ----
    bad = [
        ('{potential: "-cos(q)", energy: 1}', "separatrix"),
        ('{potential: "-cos(q)", energy: 0.9999999999999999}', "separatrix"),
        ('{potential: "-q^2", q0: 1}', "unbounded"),
        ('{potential: "q^2 + log(q)", q0: -1}', "not finite"),
        ('{potential: "-1/abs(q)", q0: 1}', "V is unbounded below (singular) at q = 0,"),
        ('{potential: "q^2 + * 3"}', "column 7 of the formula: the formula does not parse"),
        ('{potential: "q^2 + (q"}', "column 7 of the formula: '(' is never closed"),
        ('{potential: "k*q^2"}', "column 1 of the formula: unknown name 'k'"),
        ('{potential: "pow(q)"}', "unknown function 'pow'"),
        ('{potential: "atan2(q, 2)"}', "column 8 of the formula: unexpected character ','"),
        ('{potential: "q^2", k: 1}', "parameter 'k' appears in no formula"),
        ('{potential: "q^2", coordinates: [x]}', "unknown name 'q'"),
        # a kinetic formula's default momenta, named in the refusal: p with one
        # coordinate, p_x for each coordinate x of more (README, `momenta`)
        ('{potential: "x^2", coordinates: x, kinetic: "p_x^2/2"}',
         "unknown name 'p_x' (expected the momentum p, a parameter"),
        ('{potential: "x^2 + y^2 + z^2", coordinates: [x, y, z], kinetic: "p^2/2"}',
         "unknown name 'p' (expected a momentum (p_x, p_y, p_z), a parameter"),
        ('{potential: "q^2.1234567"}', "exponent"),
        ('{potential: "q^2", q0: 1, section: {level: 5}}', "not crossed"),
        ('{potential: "q^2", section: {level: 0, direction: down}}', "only up"),
        ('{potential: "q^2", problem: pendulum}', "give one of"),
        ('{potential: "q^2", kinetic: "p^2/2", masses: 2, period: 1}', "either masses or a kinetic"),
        ('{potential: "q^2", momenta: [p]}', "momenta name the variables of a kinetic"),
        ('{potential: "q^2", side: left}', "side goes with energy"),
        ('{potential: "q^2", energy: 1, side: up}', "expected left or right"),
        ('{potential: "q^2", energy: 1, p0: 1}', "either p0 or energy"),
        ('{potential: "x^2 + y^2", coordinates: [x, y], q0: [1], period: 1}', "lists 1 numbers"),
        ('{potential: "sin^2", coordinates: [sin]}', "coordinate name 'sin' is taken"),
        ('{potential: "x^2", coordinates: [x, x], period: 1}', "given twice"),
        ('{potential: "q^2", period: 3}', "period is computed"),
        ('{potential: "q^2", masses: -1}', "not a positive number"),
        ('{potential: "q^2", name: "a/b"}', "name 'a/b'"),
        ('{potential: "q^2", section: {coordinate: y, level: 0}}', "not a coordinate"),
    ]
    for i, (entry, words) in enumerate(bad):
        name = f"bad{i}"
        p, out = run_suite(tmp, name, f"horizon: {{periods: 10}}\nproblems:\n  - {entry}\n"
                           "methods:\n  - {method: verlet, h: 0.01}\n", expect=2)
        err = p.stderr.strip().splitlines()
        line = err[-1] if err else ""
        check(len([l for l in err if "warning" not in l and "compiled" not in l]) == 1,
              f"{entry}: one line: {p.stderr}")
        check(f" {tmp}/{name}.yaml:5:" in line, f"{entry}: located: {line}")
        check(words in line, f"{entry}: says '{words}': {line}")
        check(not os.path.exists(out), f"{entry}: nothing written")
        print("refused:", line.split(": ", 1)[1] if ": " in line else line)

checklib.finish("check_formula")

#!/usr/bin/python3
"""Next to every separatrix, the energy and the closed-form period that `driftmark period`
reports belong to the state actually started (q0, p0 as the doubles printed), and are
right to rounding. Reference: mpmath at 40 digits, from that state, with the textbook
closed forms (common practice; see ../shared REFERENCES: pendulum T = 4 K(m) / w0,
m = sin^2(theta0/2), or 4 K(k^2) / p0 in rotation; double well from its turning points;
Morse T = 2 pi sqrt(m) / (alpha sqrt(2 (D - E)))). One check of the closed forms
themselves is done by mpmath's own quadrature of T = 2 int dq / sqrt(2 (E - V)) at
1e-6 from each separatrix.

usage: check_separatrix.py PATH/TO/driftmark
"""
import json
import subprocess
import sys

import mpmath as mp

mp.mp.dps = 40
EXE = sys.argv[1]
failures = []


def period_json(problem, **params):
    args = [EXE, "period", problem] + [f"{k}={v!r}" for k, v in params.items()] + ["--json"]
    out = subprocess.run(args, capture_output=True, text=True)
    if out.returncode != 0:
        raise SystemExit(f"FAIL: {' '.join(args)}: exit {out.returncode}: {out.stderr.strip()}")
    return json.loads(out.stdout)


def check(label, got, ref, tol):
    rel = abs(mp.mpf(got) - ref) / abs(ref)
    print(f"{label}: got {got!r} reference {mp.nstr(ref, 20)} relative {mp.nstr(rel, 3)}")
    if rel > tol:
        failures.append(f"{label}: relative error {mp.nstr(rel, 3)} > {tol}")


def quad_period(V, E, lo, hi):
    """T = 2 int_lo^hi dq / sqrt(2 (E - V(q))) with q = lo + (hi - lo) sin^2(th), which
    removes the inverse-square-root endpoint singularities (common practice)."""
    def f(th):
        q = lo + (hi - lo) * mp.sin(th) ** 2
        dq = 2 * (hi - lo) * mp.sin(th) * mp.cos(th)
        return dq / mp.sqrt(2 * (E - V(q)))
    # at the endpoints E - V is zero to rounding: keep the real part
    return 2 * mp.re(mp.quad(f, [0, mp.pi / 4, mp.pi / 2]))


# ---- pendulum, g_over_l = 1: separatrix E = 1 ----
def pendulum_reference(r):
    th0, p0 = mp.mpf(r["q0"][0]), mp.mpf(r["p0"][0])
    E = p0 ** 2 / 2 - mp.cos(th0)
    if E < 1:
        T = 4 * mp.ellipk(mp.sin(th0 / 2) ** 2)
    else:
        T = 4 * mp.ellipk(4 / p0 ** 2) / p0
    return E, T


for d in (1e-6, 1e-9, 1e-12):
    for E in (1 - d, 1 + d):
        r = period_json("pendulum", energy=E)
        Eref, Tref = pendulum_reference(r)
        check(f"pendulum E={E!r} energy", r["energy"], Eref, 4e-16)
        check(f"pendulum E={E!r} period", r["period"], Tref, 1e-14)
r = period_json("pendulum", energy=1 - 1e-6)
th0 = mp.mpf(r["q0"][0])
check("pendulum 1e-6 below: closed form against quadrature", pendulum_reference(r)[1],
      quad_period(lambda q: -mp.cos(q), -mp.cos(th0), -th0, th0), 1e-15)


# ---- double well, a = b = 1: separatrix E = 0 (V = -x^2/2 + x^4/4) ----
def well_reference(r):
    x0 = mp.mpf(r["q0"][0])
    E = -x0 ** 2 / 2 + x0 ** 4 / 4
    A2 = x0 ** 2
    if E < 0:
        # E - V = (1/4)(A^2 - x^2)(x^2 - B^2), B^2 = 2 - A^2; T = 2 sqrt2 K(m) / A,
        # m = (A^2 - B^2) / A^2 (common practice)
        B2 = 2 - A2
        T = 2 * mp.sqrt(2) * mp.ellipk((A2 - B2) / A2) / mp.sqrt(A2)
        lo = mp.sqrt(B2)
    else:
        # E - V = (1/4)(A^2 - x^2)(x^2 + C^2), C^2 = A^2 - 2; T = 4 sqrt2 K(m) / sqrt(A^2 + C^2),
        # m = A^2 / (A^2 + C^2) (common practice)
        C2 = A2 - 2
        T = 4 * mp.sqrt(2) * mp.ellipk(A2 / (A2 + C2)) / mp.sqrt(A2 + C2)
        lo = None
    return E, T, lo


for d in (1e-6, 1e-9, 1e-12):
    for E in (-d, d):
        r = period_json("double_well", energy=E)
        Eref, Tref, _ = well_reference(r)
        check(f"double_well E={E!r} energy", r["energy"], Eref, 4e-16)
        check(f"double_well E={E!r} period", r["period"], Tref, 1e-14)
for E in (-1e-6, 1e-6):
    r = period_json("double_well", energy=E)
    Eref, Tref, lo = well_reference(r)
    x0 = mp.mpf(r["q0"][0])
    V = lambda q: -q ** 2 / 2 + q ** 4 / 4
    if lo is not None:
        Tq = quad_period(V, Eref, lo, x0)
    else:
        Tq = quad_period(V, Eref, -x0, x0)  # over the barrier: -A to A and back
    check(f"double_well {E!r}: closed form against quadrature", Tref, Tq, 1e-15)


# ---- Morse, D = alpha = mass = 1, xe = 0: dissociation E = D = 1 ----
def morse_reference(r):
    x0 = mp.mpf(r["q0"][0])
    E = (1 - mp.exp(-x0)) ** 2
    return E, 2 * mp.pi / mp.sqrt(2 * (1 - E))


for d in (1e-6, 1e-9, 1e-12):
    r = period_json("morse", energy=1 - d)
    Eref, Tref = morse_reference(r)
    check(f"morse E=1-{d!r} energy", r["energy"], Eref, 4e-16)
    check(f"morse E=1-{d!r} period", r["period"], Tref, 1e-14)
r = period_json("morse", energy=1 - 1e-6)
x0 = mp.mpf(r["q0"][0])
Eref, Tref = morse_reference(r)
c = mp.sqrt(Eref)
check("morse 1e-6 below: closed form against quadrature", Tref,
      quad_period(lambda q: (1 - mp.exp(-q)) ** 2, Eref, x0, -mp.log(1 - c)), 1e-15)

# `period` checks its closed form against driftmark's own quadrature of the period
# integral (problems/orbit_period.c) for one degree of freedom: they must agree wherever
# the quadrature applies (away from a separatrix, with turning points)
for problem, params in (("pendulum", {"amplitude": 0.5}), ("pendulum", {"amplitude": 3.0}),
                        ("double_well", {"energy": -0.2}), ("double_well", {"energy": 0.3}),
                        ("morse", {"energy": 0.9}), ("harmonic", {"omega": 3.3})):
    r = period_json(problem, **params)
    q = r.get("period_quadrature")
    ok = q is not None and abs(q - r["period"]) <= 1e-11 * r["period"]
    print(f"{problem} {params}: period {r['period']!r}, quadrature {q!r}")
    if not ok:
        failures.append(f"{problem} {params}: quadrature {q} against {r['period']}")

if failures:
    print("\n".join("FAIL: " + f for f in failures))
    sys.exit(1)
print("all energies and periods next to the separatrices agree with mpmath")

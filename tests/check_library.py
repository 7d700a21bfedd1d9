#!/usr/bin/python3
"""A problem from the user's own C code, built as a user would: install driftmark into a
prefix, build examples/glider/glider.c with `pkg-config --cflags --libs
driftmark-problem`, and load it. Its period is checked against an outside reference
(mpmath's quadrature of T = sqrt(2m) int dq / sqrt(E - V) over the sech^2 well at 30
digits); broken objects are refused in one line with exit 2.

usage: check_library.py PATH/TO/driftmark   (run from the build directory by CTest)
"""
import json
import os
import shutil
import subprocess
import sys
import tempfile

import mpmath as mp

import checklib
from checklib import check

EXE = sys.argv[1]
BUILD = os.path.dirname(os.path.abspath(EXE))
SRC = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..")
CC = shutil.which("cc") or shutil.which("gcc")

with tempfile.TemporaryDirectory() as tmp:
    prefix = os.path.join(tmp, "prefix")
    p = subprocess.run(["cmake", "--install", BUILD, "--prefix", prefix], capture_output=True,
                       text=True)
    check(p.returncode == 0, f"cmake --install: {p.stderr}")
    env = dict(os.environ, PKG_CONFIG_PATH=os.path.join(prefix, "lib", "pkgconfig"))
    flags = subprocess.run(["pkg-config", "--cflags", "--libs", "driftmark-problem"],
                           capture_output=True, text=True, env=env).stdout.split()
    check(flags, "pkg-config knows driftmark-problem")

    def build(source, out, extra=()):
        p = subprocess.run([CC, *flags, "-O2", "-Wall", "-Wextra", "-Werror", *extra, "-o", out,
                            source], capture_output=True, text=True)
        check(p.returncode == 0, f"build {os.path.basename(source)}: {p.stderr}")

    glider = os.path.join(tmp, "glider.so")
    build(os.path.join(SRC, "examples", "glider", "glider.c"), glider)

    # the period of a start, against mpmath's quadrature of the period integral
    mp.mp.dps = 30
    p = checklib.run(EXE, ["period", glider, "energy=-0.3", "depth=2", "width=0.7", "mass=1.3",
                           "--json"], tmp)
    check(p.returncode == 0, f"period: {p.returncode} {p.stderr}")
    r = json.loads(p.stdout)
    x0, m, depth, width = mp.mpf(r["q0"][0]), mp.mpf(1.3), mp.mpf(2), mp.mpf(0.7)
    V = lambda x: -depth / mp.cosh(x / width) ** 2
    E = V(x0)
    T = mp.sqrt(2 * m) * mp.quad(lambda th: x0 * mp.cos(th) / mp.sqrt(E - V(x0 * mp.sin(th))),
                                 [-mp.pi / 2, 0, mp.pi / 2])
    rel = abs(mp.mpf(r["period"]) - T) / T
    print(f"glider period {r['period']!r} against mpmath {mp.nstr(T, 17)}: {mp.nstr(rel, 3)}")
    check(rel < 1e-14, f"glider period relative error {rel}")

    # a suite of it, as of a built-in problem: Verlet's order, the file names the object
    suite = os.path.join(tmp, "glider.yaml")
    with open(suite, "w") as f:
        f.write("""\
name: glider-valley
output: glider.h5
horizon: {periods: 300}
samples: 128
problems:
  - {problem_library: glider.so, energy: -0.3, width: 0.7}
methods:
  - {method: verlet, steps_per_period: [32, 64, 128]}
""")
    p = checklib.run(EXE, ["run", suite, "--force"], tmp)
    check(p.returncode == 0, f"suite of the library: {p.returncode} {p.stderr}")
    import h5py
    with h5py.File(os.path.join(tmp, "glider.h5"), "r") as f:
        sw = f["sweeps"][list(f["sweeps"])[0]]
        order = float(sw.attrs["energy_order"])
        g = f["runs"][list(f["runs"])[0]]
        lib, digest = g.attrs["problem_library"], g.attrs["problem_library_hash"]
        config = g.attrs["config"]
    print(f"glider under verlet: energy order {order:.4f}; {lib} {digest}")
    check(abs(order - 2.0) < 0.05, f"Verlet's order on the glider: {order}")
    check(lib.endswith("glider.so") and len(digest) == 16 and f"library={digest}" in config,
          f"the file traces the object: {lib} {digest} {config}")
    with open(suite, "a") as f:
        f.write("  - {problem_library: missing.so}\n")
    p = checklib.run(EXE, ["run", suite, "--force"], tmp)
    check(p.returncode == 2 and p.stderr.count("\n") == 1 and "glider.yaml:" in p.stderr,
          f"a missing library in a suite: {p.returncode} {p.stderr!r}")

    # broken objects: refused in one line, exit 2
    bad = os.path.join(tmp, "bad.c")
    cases = {
        "no entry": "int unrelated(void) { return 1; }\n",
        "another interface": '#include "problem.h"\n'
                             "const dm_problem *dm_problem_entry(unsigned *abi);\n"
                             "const dm_problem *dm_problem_entry(unsigned *abi)\n"
                             "{ *abi = DM_PROBLEM_ABI + 7; return 0; }\n",
        "lacks": '#include "problem.h"\n'
                 'static const dm_problem t = { .id = "half", .name = "half a table", .dof = 1,\n'
                 '  .n_regimes = 1, .regimes = { { "r", "r" } } };\n'
                 "const dm_problem *dm_problem_entry(unsigned *abi);\n"
                 "const dm_problem *dm_problem_entry(unsigned *abi)\n"
                 "{ *abi = DM_PROBLEM_ABI; return &t; }\n",
    }
    for what, text in cases.items():
        with open(bad, "w") as f:
            f.write(text)
        so = os.path.join(tmp, what.replace(" ", "_") + ".so")
        build(bad, so)
        p = checklib.run(EXE, ["period", so], tmp)
        print(f"{what}: {p.stderr.strip()}")
        check(p.returncode == 2 and p.stderr.count("\n") == 1 and so in p.stderr,
              f"{what}: exit {p.returncode} {p.stderr!r}")
    notelf = os.path.join(tmp, "text.so")
    with open(notelf, "w") as f:
        f.write("not an object\n")
    p = checklib.run(EXE, ["period", notelf], tmp)
    check(p.returncode == 2 and p.stderr.count("\n") == 1, f"not an object: {p.stderr!r}")

checklib.finish("library")

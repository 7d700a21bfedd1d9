"""checklib.py — what the scripted checks (tests/check_*.py) share: a list of failures,
`check`, running the driftmark under test, and the closing line CTest and CI read."""
import subprocess
import sys

failures = []


def check(cond, what):
    """Records `what` as a failure (and prints it) unless cond holds; returns cond."""
    if not cond:
        failures.append(what)
        print("FAIL:", what)
    return cond


def run(exe, args, cwd=None):
    """The driftmark `exe` with `args`; stdout and stderr captured as text."""
    return subprocess.run([exe] + list(args), capture_output=True, text=True, cwd=cwd)


def finish(name):
    """Prints the closing line ('N passed, N failed') and exits 1 on any failure."""
    if failures:
        print(f"0 passed, {len(failures)} failed")
        sys.exit(1)
    print(f"{name}: 1 passed, 0 failed")

"""Shared reporting for the reference scripts: each check is (name, error, largest value),
and passes when error <= 1e-9 * (1 + largest): double precision, relative to the quantity."""
import sys

TOLERANCE = 1e-9


def report(fs, checks):
    """Prints one line per check; returns how many failed."""
    failures = 0
    for name, err, largest in checks:
        ok = err <= TOLERANCE * (1.0 + largest)
        print(f"fs {fs:g}: {name} max |kerf - reference| = {err:.3e} {'ok' if ok else 'FAIL'}")
        failures += 0 if ok else 1
    return failures


def finish(failures):
    """Exits non-zero when anything failed."""
    if failures:
        print(f"{failures} reference checks failed")
        sys.exit(1)
    print("all reference checks passed")

#!/usr/bin/python3
"""Reference check: Kerf's Butterworth high-/low-pass designs against scipy.signal.butter.

Usage: check_designs_scipy.py PATH/TO/kerf_print_designs

Source of truth: scipy.signal.butter(N, fc, btype, fs=fs, output='sos') (Debian
python3-scipy). SciPy puts the whole gain in the first section and orders sections with the
poles nearest the unit circle last; for odd orders its zpk2sos gives the real pole both zeros
of a pair and the last pair a single zero. Kerf gives every section unity passband gain and
one zero per real pole. So the check compares, after sorting both cascades by (a2, a1): each
section's denominator (a1, a2) to 1e-12; the cascade's numerator polynomial, gain-normalised
(b / b[0]), to 1e-12, and its gain (product of the sections' b0) to 1e-12 relative; and the
expanded transfer function of the whole cascade (scipy.signal.sos2tf) to 1e-9 relative.
Exits non-zero on any failure.
"""
import json
import subprocess
import sys

import numpy as np
from scipy import signal

SECTION_TOL = 1e-12
TF_REL_TOL = 1e-9


def sort_sections(sos):
    return sos[np.lexsort((sos[:, 4], sos[:, 5]))]


def main():
    if len(sys.argv) != 2:
        print(__doc__)
        return 2
    out = subprocess.run([sys.argv[1]], check=True, capture_output=True, text=True).stdout
    designs = json.loads(out)["designs"]
    failures = 0
    worst_section = 0.0
    worst_tf = 0.0
    for d in designs:
        mine = np.array(d["sos"], dtype=float)
        ref = signal.butter(d["order"], d["fc"], btype=d["type"], fs=d["fs"], output="sos")
        label = f'{d["type"]} {d["mode"]} N={d["order"]} fc={d["fc"]:g} fs={d["fs"]:g}'
        if mine.shape != ref.shape:
            print(f"FAIL {label}: {mine.shape[0]} sections, SciPy has {ref.shape[0]}")
            failures += 1
            continue
        m, r = sort_sections(mine), sort_sections(ref)
        den_err = np.max(np.abs(m[:, 3:] - r[:, 3:]))
        bm, am = signal.sos2tf(mine)
        br, ar = signal.sos2tf(ref)
        num_err = np.max(np.abs(bm / bm[0] - br / br[0]))
        gain_err = abs(np.prod(m[:, 0]) / np.prod(r[:, 0]) - 1.0)
        tf_err = max(np.max(np.abs(bm - br)) / np.max(np.abs(br)),
                     np.max(np.abs(am - ar)) / np.max(np.abs(ar)))
        sec_err = max(den_err, num_err, gain_err)
        worst_section = max(worst_section, sec_err)
        worst_tf = max(worst_tf, tf_err)
        if sec_err > SECTION_TOL or tf_err > TF_REL_TOL:
            print(f"FAIL {label}: section error {sec_err:.3g}, transfer-function error "
                  f"{tf_err:.3g}")
            failures += 1
    print(f"designs vs scipy.signal.butter (SciPy {__import__('scipy').__version__}): "
          f"{len(designs)} designs, {failures} failures, worst section coefficient error "
          f"{worst_section:.3g} (tol {SECTION_TOL:g}), worst expanded-polynomial relative "
          f"error {worst_tf:.3g} (tol {TF_REL_TOL:g})")
    return 1 if failures or not designs else 0


if __name__ == "__main__":
    sys.exit(main())

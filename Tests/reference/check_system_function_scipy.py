#!/usr/bin/python3
"""Reference check: the system function of a chain with every section type, against SciPy.

`kerf response --poles` prints each stage's designed sections [b0, b1, b2, 1, a1, a2]; SciPy
then computes, from those same coefficients (Debian python3-scipy):
  - scipy.signal.freqz          -> magnitude (dB) and unwrapped phase of the product,
  - scipy.signal.tf2zpk         -> poles, zeros and gain of each stage,
  - scipy.signal.group_delay    -> group delay, summed over the first-order factors
                                   (1 - r z^-1) of every section (well conditioned; see
                                   check_response_scipy.py for why not on whole biquads),
and `kerf response` must agree to 1e-9 (relative to each quantity's largest value).
Usage: check_system_function_scipy.py PATH_TO_KERF
"""
import json
import subprocess
import sys
import tempfile

import numpy as np
import refcheck
from scipy import signal

KERF = sys.argv[1]
CHAIN = {"format": "kerf-chain", "version": 1, "stages": [  # synthetic settings
    {"type": "high_pass", "freq_hz": 45, "order": 5},
    {"type": "high_pass", "freq_hz": 80, "order": 4, "alignment": "linkwitz_riley"},
    {"type": "low_shelf", "freq_hz": 150, "gain_db": 4, "slope": 0.8},
    {"type": "peaking", "freq_hz": 900, "gain_db": -7, "q": 3},
    {"type": "peaking", "freq_hz": 2500, "gain_db": 5, "q": 1.2, "design": "bilinear"},
    {"type": "notch", "freq_hz": 3000, "q": 6},
    {"type": "band_pass", "freq_hz": 700, "q": 0.4},
    {"type": "all_pass", "freq_hz": 500, "order": 1},
    {"type": "all_pass", "freq_hz": 1500, "order": 2, "q": 0.9},
    {"type": "tilt", "freq_hz": 1200, "gain_db": 3},
    {"type": "high_shelf", "freq_hz": 9000, "gain_db": -5, "design": "bilinear"},
    {"type": "low_pass", "freq_hz": 15000, "order": 2, "q": 2.5},
    {"type": "low_pass", "freq_hz": 18000, "order": 7},
]}


def run(args):
    return subprocess.run([KERF] + args, check=True, capture_output=True, text=True).stdout


def sort_roots(r):
    return np.array(sorted(r, key=lambda z: (round(z.real, 6), round(z.imag, 6))))


def main():
    failures = 0
    with tempfile.NamedTemporaryFile("w", suffix=".json", delete=False) as tf:
        json.dump(CHAIN, tf)
        path = tf.name
    for fs in (44100.0, 48000.0, 96000.0):
        pz = json.loads(run(["response", "--chain", path, "--rate", repr(fs), "--poles"]))
        freqs = np.geomspace(20.0, 0.45 * fs, 300)
        pts = json.loads(run(["response", "--chain", path, "--rate", repr(fs), "--format",
                              "json", "--freqs", ",".join(repr(float(f)) for f in freqs)]))["points"]
        got_db = np.array([p["magnitude_db"] for p in pts])
        got_ph = np.array([p["phase_deg"] for p in pts])
        got_gd = np.array([p["group_delay_samples"] for p in pts])

        h = np.ones(len(freqs), dtype=complex)
        gd = np.zeros(len(freqs))
        worst_root = 0.0
        for st in pz["stages"]:
            z_all, p_all, k_all = [], [], 1.0
            for sec in st["sections"]:
                b = np.array(sec[:3])
                a = np.array(sec[3:])
                if b[2] == 0.0 and a[2] == 0.0:  # first-order section
                    b, a = b[:2], a[:2]
                h *= signal.freqz(b, a, worN=freqs, fs=fs)[1]
                z, p, k = signal.tf2zpk(b, a)
                z_all += list(z)
                p_all += list(p)
                k_all *= k
                for r in z:
                    gd += signal.group_delay(([1.0, -r], [1.0]), w=freqs, fs=fs)[1]
                for r in p:
                    gd -= signal.group_delay(([1.0, -r], [1.0]), w=freqs, fs=fs)[1]
            kz = np.array([complex(*v) for v in st["zeros"]])
            kp = np.array([complex(*v) for v in st["poles"]])
            if len(kz) != len(z_all) or len(kp) != len(p_all):
                print(f"stage {st['index']}: root count differs")
                failures += 1
                continue
            worst_root = max(worst_root,
                             np.max(np.abs(sort_roots(kz) - sort_roots(z_all)), initial=0.0),
                             np.max(np.abs(sort_roots(kp) - sort_roots(p_all)), initial=0.0),
                             abs(st["gain"] - k_all) / abs(k_all))
        ref_db = 20 * np.log10(np.abs(h))
        ref_ph = np.degrees(np.unwrap(np.angle(h)))
        ref_ph += 360.0 * round((got_ph[0] - ref_ph[0]) / 360.0)
        checks = [
            ("magnitude_db", np.max(np.abs(got_db - ref_db)), np.max(np.abs(ref_db))),
            ("phase_deg", np.max(np.abs(got_ph - ref_ph)), np.max(np.abs(ref_ph))),
            ("group_delay_samples", np.max(np.abs(got_gd - gd)), np.max(np.abs(gd))),
            ("poles/zeros/gain vs tf2zpk", worst_root, 0.0),
        ]
        failures += refcheck.report(fs, checks)
    refcheck.finish(failures)


if __name__ == "__main__":
    main()

#!/usr/bin/python3
"""Reference check: `kerf response` against SciPy on the same peaking chain.

Sources: Audio EQ Cookbook (R. Bristow-Johnson, W3C Working Group Note, 2021) for the
peakingEQ coefficients, computed here independently; scipy.signal.freqz and
scipy.signal.group_delay (Debian python3-scipy) for the response of their product.
Usage: check_response_scipy.py PATH_TO_KERF
"""
import json
import math
import subprocess
import sys
import tempfile

import numpy as np
from scipy import signal

KERF = sys.argv[1]
STAGES = [  # synthetic settings: low/high, narrow/wide, boost/cut
    (40.0, 6.0, 0.7),
    (320.0, -4.5, 1.4),
    (1000.0, 6.0, 1.0),
    (2500.0, -9.0, 8.0),
    (12000.0, 3.0, 0.5),
]


def cookbook_peaking(f0, gain_db, q, fs):
    a = 10 ** (gain_db / 40)
    w0 = 2 * math.pi * f0 / fs
    alpha = math.sin(w0) / (2 * q)
    b = np.array([1 + alpha * a, -2 * math.cos(w0), 1 - alpha * a])
    den = np.array([1 + alpha / a, -2 * math.cos(w0), 1 - alpha / a])
    return b / den[0], den / den[0]


def main():
    failures = 0
    for fs in (44100.0, 48000.0, 96000.0):
        chain = {"format": "kerf-chain", "version": 1, "stages": [
            {"type": "peaking", "freq_hz": f, "gain_db": g, "q": q, "enabled": True}
            for (f, g, q) in STAGES]}
        freqs = np.geomspace(10.0, 0.499 * fs, 200)
        with tempfile.NamedTemporaryFile("w", suffix=".json", delete=False) as tf:
            json.dump(chain, tf)
            path = tf.name
        out = subprocess.run(
            [KERF, "response", "--chain", path, "--rate", repr(fs), "--format", "json",
             "--freqs", ",".join(repr(float(f)) for f in freqs)],
            check=True, capture_output=True, text=True).stdout
        points = json.loads(out)["points"]
        got_db = np.array([p["magnitude_db"] for p in points])
        got_phase = np.array([p["phase_deg"] for p in points])
        got_gd = np.array([p["group_delay_samples"] for p in points])

        h = np.ones(len(freqs), dtype=complex)
        gd = np.zeros(len(freqs))
        for (f, g, q) in STAGES:
            b, a = cookbook_peaking(f, g, q, fs)
            _, hs = signal.freqz(b, a, worN=freqs, fs=fs)
            _, gds = signal.group_delay((b, a), w=freqs, fs=fs)
            h *= hs
            gd += gds
        ref_db = 20 * np.log10(np.abs(h))
        ref_phase = np.degrees(np.unwrap(np.angle(h)))
        # Both unwrap from the first point; align a possible whole-turn offset there.
        ref_phase += 360.0 * round((got_phase[0] - ref_phase[0]) / 360.0)

        checks = {
            "magnitude_db": np.max(np.abs(got_db - ref_db)),
            "phase_deg": np.max(np.abs(got_phase - ref_phase)),
            "group_delay_samples": np.max(np.abs(got_gd - gd)),
        }
        # Bar: 1e-9 in each quantity (double precision; the CLI prints 12 significant digits).
        for name, err in checks.items():
            scale = 1.0 + max(np.max(np.abs(ref_db)), np.max(np.abs(gd)), 1.0)
            ok = err <= 1e-9 * scale
            print(f"fs {fs:g}: {name} max |kerf - scipy| = {err:.3e} {'ok' if ok else 'FAIL'}")
            failures += 0 if ok else 1
    if failures:
        print(f"{failures} reference checks failed")
        sys.exit(1)
    print("all reference checks passed")


if __name__ == "__main__":
    main()

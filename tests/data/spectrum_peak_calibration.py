#!/usr/bin/python3
"""Calibration of the peak significance rule of src/el_spectrum.c (a project
choice, see docs/method-spectrum.md): counts the peaks that pass the rule on
spectra with no sharp line (white noise, red AR(1) noise, a noise-driven
well-damped mode zeta 0.3 and a lightly damped mode zeta 0.05 at 1 Hz,
dt 0.05) for several record lengths and segment lengths (K segments), with
z = 2..5. The genuine peak of the two mode cases should be counted once;
everything else is a false peak. Not part of the test run.

Run: /usr/bin/python3 tests/data/spectrum_peak_calibration.py
"""
import numpy as np
from scipy import signal

rng = np.random.default_rng(7)
DT = 0.05


def mean3(P, j):
    """Mean of bins j-1, j, j+1 within 1..len(P)-1 (as mean3 in the C code)."""
    lo, hi = max(1, j - 1), min(len(P) - 1, j + 1)
    return P[lo:hi + 1].mean()


def peaks(P, nu, z, threshold_ratio=10.0):
    """The rule of el_spectrum_find_peaks (bins 2..nb-2; bases over 1.. on
    three-bin means)."""
    med = np.median(P[1:])
    floor = 1e-12 * P[1:].max()
    thr = max(threshold_ratio * med, floor)
    q = max(2.0, np.exp(2.0 * z / np.sqrt(nu)))
    found = []
    for k in range(2, len(P) - 1):
        if not (P[k] > P[k - 1] and P[k] >= P[k + 1] and P[k] >= thr):
            continue
        j, left = k - 1, P[k]
        while j >= 1 and P[j] <= P[k]:
            left = min(left, mean3(P, j))
            j -= 1
        j, right = k + 1, P[k]
        while j < len(P) and P[j] <= P[k]:
            right = min(right, mean3(P, j))
            j += 1
        if P[k] >= q * max(left, right):
            found.append(k)
    return found


def mode(n, f, zeta):
    wn = 2 * np.pi * f / np.sqrt(1 - zeta ** 2)
    r = np.exp(-zeta * wn * DT)
    th = wn * np.sqrt(1 - zeta ** 2) * DT
    e = rng.standard_normal(n + 500)
    return signal.lfilter([1], [1, -2 * r * np.cos(th), r * r], e)[500:]


CASES = [("white", lambda n: rng.standard_normal(n)),
         ("red AR(1) 0.98", lambda n: signal.lfilter([1], [1, -0.98], rng.standard_normal(n))),
         ("mode zeta 0.3", lambda n: mode(n, 1.0, 0.3)),
         ("mode zeta 0.05", lambda n: mode(n, 1.0, 0.05))]

for name, gen in CASES:
    for n in (2048, 8192, 32768):
        L0 = max(64, 2 ** int(np.floor(np.log2(n / 4))))
        for L in (L0, L0 // 4):
            K = (n - L) // (L - L // 2) + 1
            nu = 2 * K / (1 + 2 * (1 - 1 / K) * (1 / 6) ** 2)
            counts = {z: 0 for z in (2, 3, 4, 5)}
            reps = 40
            for _ in range(reps):
                _, P = signal.welch(gen(n), fs=1 / DT, window="hann", nperseg=L,
                                    noverlap=L // 2)
                for z in counts:
                    counts[z] += len(peaks(P, nu, z))
            print("%-16s n=%6d L=%5d K=%3d  mean peaks per record:" % (name, n, L, K),
                  "  ".join("z=%d: %.2f" % (z, counts[z] / reps) for z in counts))

#!/usr/bin/python3
"""Where el_spectrum_find_peaks puts a broad peak: 200 simulated logs of a
noise-driven damped mode like the rig-test demo's 2.4 Hz mode (f_n 2.4 Hz,
zeta 0.05, dt 0.01 s, 9000 samples, segments of 2048, light sensor noise).
Compares the error of the frequency of the peak placed by the project's rule
(the centre of the half-power band of the PSD smoothed over 5 bins with
weights 1 2 3 2 1, src/el_spectrum.c) with the old rule (the parabola
through the log PSD at the tallest bin), against the closed-form peak of
the AR(2) spectrum, cos w = a1 (a2 - 1) / (4 a2) for
x[k] = a1 x[k-1] + a2 x[k-2] + e[k] (e.g. Priestley 1981, "Spectral
analysis and time series", sec. 4.12; recalled from memory, checked here
numerically on the spectrum). Gives the tolerance of test_rig_demo_peaks in
tests/test_spectrum.c. Not part of the test run.

Run: /usr/bin/python3 tests/data/spectrum_peak_location.py   (numpy, scipy)
Printed on 2026-12-04 (numpy 1.24.2, scipy 1.10.1):
  band centre: median 0.0202, 95 % 0.0502, largest 0.0768 Hz
  tallest bin: median 0.0348, 95 % 0.0891, largest 0.1378 Hz
"""
import numpy as np
from scipy import signal

KERNEL = np.array([1.0, 2.0, 3.0, 2.0, 1.0])


def mean3(P, j):
    lo, hi = max(1, j - 1), min(len(P) - 1, j + 1)
    return P[lo:hi + 1].mean()


def raw_peaks(P, nu, z, threshold_ratio=10.0):
    """The candidate rule of el_spectrum_find_peaks (as in
    spectrum_peak_calibration.py): local maxima over 10 x the median that
    stand q = max(2, exp(2 z / sqrt(nu))) above their three-bin-mean bases."""
    thr = max(threshold_ratio * np.median(P[1:]), 1e-12 * P[1:].max())
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


def smooth(P):
    S = P.copy()
    for k in range(1, len(P)):
        lo, hi = max(1, k - 2), min(len(P) - 1, k + 2)
        w = KERNEL[lo - k + 2:hi - k + 3]
        S[k] = np.dot(w, P[lo:hi + 1]) / w.sum()
    return S


def climb(S, k):
    while True:
        if k + 1 < len(S) and S[k + 1] > S[k]:
            k += 1
        elif k > 1 and S[k - 1] > S[k]:
            k -= 1
        else:
            return k


def band(S, m):
    half = S[m] / 2
    j = m
    while j >= 1 and S[j] >= half:
        if S[j] > S[m]:
            return None
        j -= 1
    if j < 1:
        return None
    lo = j + (half - S[j]) / (S[j + 1] - S[j])
    j = m
    while j < len(S) and S[j] >= half:
        if S[j] > S[m]:
            return None
        j += 1
    if j >= len(S):
        return None
    return lo, (j - 1) + (S[j - 1] - half) / (S[j - 1] - S[j])


def parabola(P, k):
    a, b, c = np.log(P[k - 1:k + 2])
    cur = a - 2 * b + c
    return k if not cur < 0 else k + float(np.clip(0.5 * (a - c) / cur, -0.5, 0.5))


def main():
    rng = np.random.default_rng(1)
    dt, fn, zeta, n, L = 0.01, 2.4, 0.05, 9000, 2048
    wn = 2 * np.pi * fn
    mu = np.exp(complex(-zeta * wn, wn * np.sqrt(1 - zeta ** 2)) * dt)
    a1, a2 = 2 * mu.real, -abs(mu) ** 2
    f_peak = np.arccos(a1 * (a2 - 1) / (4 * a2)) / (2 * np.pi * dt)
    nu = 13.4  # dof of 7 Hann segments at 50 % overlap (Welch 1967)
    new, old = [], []
    for _ in range(200):
        x = signal.lfilter([1], [1, -a1, -a2], rng.standard_normal(n + 500))[500:]
        x = x + 0.02 * x.std() * rng.standard_normal(n)
        f, P = signal.welch(x, fs=1 / dt, window="hann", nperseg=L, noverlap=L // 2)
        cands = raw_peaks(P, nu, 5.0)
        if not cands:
            continue
        S = smooth(P)
        top = max(cands, key=lambda k: P[k])
        b = band(S, climb(S, top))
        new.append((0.5 * (b[0] + b[1]) if b else parabola(P, top)) * f[1] - f_peak)
        old.append(parabola(P, top) * f[1] - f_peak)
    print("closed-form PSD peak %.5f Hz, bin %.5f Hz, %d logs" % (f_peak, f[1], len(new)))
    for name, e in (("band centre", new), ("tallest bin", old)):
        e = np.abs(e)
        print("  %s: median %.4f, 95 %% %.4f, largest %.4f Hz"
              % (name, np.median(e), np.percentile(e, 95), e.max()))


if __name__ == "__main__":
    main()

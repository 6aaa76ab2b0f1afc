#!/usr/bin/env python3
"""Calibration of the level check (el_regime_run, step 7; docs/method.md,
"A level that moves"): how often it flags stationary processes of several
time scales, and how often it finds a real trend or step, for the
thresholds EL_REGIME_LEVEL_Z = 4, EL_REGIME_LEVEL_SHARE = 0.25 and
EL_REGIME_LEVEL_BLOCK_R2 = 0.75. A numpy rewrite of the C rule (M =
min(16, N / 8) blocks of L = N / M samples, block noise from the median of
squared successive differences of the block means, slope and best split z,
share of the variance, R^2 of the block means). 200 logs of N = 2000 per
case; prints the flagged count. Needs python3-numpy; about a minute.
"""
import numpy as np

Z, SHARE, R2 = 4.0, 0.25, 0.75
CHI2_1_MEDIAN = 0.454936423119573


def flagged(x):
    n = len(x)
    m = min(16, n // 8)
    ln = n // m
    off = (n - m * ln) // 2
    xs = x[off:off + m * ln]
    b = xs.reshape(m, ln).mean(1)
    v = np.median(np.diff(b) ** 2) / (2 * CHI2_1_MEDIAN)
    mean = xs.mean()
    sst = ((xs - mean) ** 2).sum()
    sbb = ((b - mean) ** 2).sum()
    a = np.arange(m) - (m - 1) / 2
    slope = (a * (b - mean)).sum() / (a * a).sum()
    zt = slope / np.sqrt(v / (a * a).sum())
    ok = abs(zt) >= Z and ln * slope ** 2 * (a * a).sum() / sst >= SHARE \
        and slope ** 2 * (a * a).sum() / sbb >= R2
    best = (0.0, 0.0, 0.0)
    for k in range(2, m - 1):
        lo, hi = b[:k].mean(), b[k:].mean()
        z = (hi - lo) / np.sqrt(v * (1 / k + 1 / (m - k)))
        if abs(z) > abs(best[0]):
            ss = k * (lo - mean) ** 2 + (m - k) * (hi - mean) ** 2
            best = (z, ln * ss / sst, ss / sbb)
    return ok or (abs(best[0]) >= Z and best[1] >= SHARE and best[2] >= R2)


rng = np.random.default_rng(20261204)
N = 2000


def ar1(tau):
    phi = np.exp(-1 / tau)
    e = rng.standard_normal(N)
    x = np.empty(N)
    x[0] = e[0] / np.sqrt(1 - phi ** 2)
    for k in range(1, N):
        x[k] = phi * x[k - 1] + e[k]
    return x


def osc(cycles, zeta):
    w = 2 * np.pi * cycles / N
    r = np.exp(-zeta * w)
    a1, a2 = 2 * r * np.cos(w * np.sqrt(1 - zeta ** 2)), -r * r
    e = rng.standard_normal(N + 2000)
    x = np.zeros(N + 2000)
    for k in range(2, N + 2000):
        x[k] = a1 * x[k - 1] + a2 * x[k - 2] + e[k]
    return x[2000:]


cases = [
    ("stationary AR(1), tau = T/100", lambda: ar1(N / 100)),
    ("stationary AR(1), tau = T/16", lambda: ar1(N / 16)),
    ("stationary AR(1), tau = T/4", lambda: ar1(N / 4)),
    ("stationary AR(1), tau = T", lambda: ar1(N)),
    ("oscillation, 100 cycles, zeta 0.05", lambda: osc(100, 0.05)),
    ("oscillation, 5 cycles, zeta 0.05", lambda: osc(5, 0.05)),
    ("oscillation, 2 cycles, zeta 0.1", lambda: osc(2, 0.1)),
    ("random walk", lambda: np.cumsum(rng.standard_normal(N))),
    ("rise of 3 sd + white noise", lambda: np.linspace(0, 3, N) + rng.standard_normal(N)),
    ("rise of 3 sd + AR(1) tau = T/100",
     lambda: (lambda y: y + np.linspace(0, 3, N) * y.std())(ar1(20))),
    ("step of 1.5 sd at 35% + AR(1) tau = T/100",
     lambda: (lambda y: y + np.where(np.arange(N) < 700, 0, 1.5) * y.std())(ar1(20))),
]
for name, gen in cases:
    hits = sum(flagged(gen()) for _ in range(200))
    print("%-44s flagged %3d of 200" % (name, hits))

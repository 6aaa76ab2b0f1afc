#!/usr/bin/python3
"""iv_basis_check: brute-force check of iv's bootstrap (docs/uncertainty.md,
"iv's basis in the replicates"). Not part of make; needs python3-numpy.

On simulated logs of the calibration's spiral sink (bench/calibrate.c: two
channels, -0.3 +- 2i 1/s, dt 0.1 s, unit process noise, 3,000 samples of
burn-in; optional white sensor noise as a fraction of each channel's sd),
iv with a delay state of K lags, depth K + 1 and rank 2 is fitted and
bootstrapped by moving blocks of the sample times (a replicate weights the
instrument step's rows and the windows by the draw counts of their
samples) in three ways from the same draws:
  held:   the point fit's basis kept (what el_resample does);
  refit:  the basis re-estimated from the replicate's weighted step-1 Gram
          (the ideal bootstrap);
  super:  only the canonical problem re-solved inside a fixed superset of
          --superset leading directions of the point fit;
and, with --model, a model-based bootstrap: the channels regenerated
through the least-squares VAR(1) of the log with resampled residuals and
iv refitted completely (--boot / 3 replicates), and the held replicates
widened to that spread when it is wider (least squares' rule). Replicates are shifted to
median = point estimate (as el_resample's recentre) and the 2.5 / 97.5 %
percentiles are the bounds. Prints coverage of the true Re lambda and
w/sd (mean width over 3.92 x the spread of the point estimates).

Usage: iv_basis_check.py [--logs 80] [--boot 300] [--length 2000]
                         [--lags 14] [--block 35] [--superset 6]
                         [--sensor-noise 0] [--model] [--first 0]
                         [--held-only]
--first: the first log's number (seeds 1000 + number); --held-only: only
the held basis (and --model's kinds).
Run with OPENBLAS_NUM_THREADS=1 under nice on a shared machine.
"""
import argparse
import numpy as np

ap = argparse.ArgumentParser()
ap.add_argument('--logs', type=int, default=80)
ap.add_argument('--boot', type=int, default=300)
ap.add_argument('--length', type=int, default=2000)
ap.add_argument('--lags', type=int, default=14)
ap.add_argument('--block', type=int, default=35)
ap.add_argument('--superset', type=int, default=6)
ap.add_argument('--sensor-noise', type=float, default=0.0)
ap.add_argument('--model', action='store_true')
ap.add_argument('--first', type=int, default=0)
ap.add_argument('--held-only', action='store_true')
o = ap.parse_args()
N, K, L, SUP, SN = o.length, o.lags, o.block, o.superset, o.sensor_noise
DT, RE, IM = 0.1, -0.3, 2.0
g = np.exp(RE * DT)
BM = g * np.array([[np.cos(IM * DT), -np.sin(IM * DT)], [np.sin(IM * DT), np.cos(IM * DT)]])
T = np.array([[1.0 if i == j else 0.35 * np.sin(1.0 + 3 * i + 7 * j) for j in range(2)]
              for i in range(2)])
AD = T @ BM @ np.linalg.inv(T)
R = 2


def simulate(rng, ad, noise=None, burn=3000):
    x = np.zeros(2)
    out = np.empty((N, 2))
    for k in range(burn + N):
        if k >= burn:
            out[k - burn] = x
        x = ad @ x + (rng.standard_normal(2) if noise is None else noise[k])
    if SN > 0 and noise is None:
        out += SN * out.std(0) * rng.standard_normal(out.shape)
    return out


def delay(xs, lags, start, count):
    return np.hstack([xs[start - j:start - j + count] for j in range(lags + 1)])


def wcov(m, w):
    c = m - (w @ m) / w.sum()
    return (c * w[:, None]).T @ c


def sym_pow(s, p):
    lam, v = np.linalg.eigh(s)
    keep = lam > 1e-10 * lam[-1]
    f = np.zeros_like(lam)
    f[keep] = lam[keep] ** p
    return (v * f) @ v.T


class Log:
    def __init__(self, xs):
        self.xs = (xs - xs.mean(0)) / xs.std(0)
        self.d = 2 * (K + 1)
        k0 = 2 * K + 1
        self.rows_k = np.arange(k0, N)
        self.z = delay(self.xs, K, k0, N - k0)
        self.p = delay(self.xs, K, k0 - (K + 1), N - k0)
        m = N - K - 1
        self.states = delay(self.xs, K, K, m + 1)
        self.nw = m + 1 - (2 * K + 4) + 1
        self.u = np.arange(self.nw)
        self.win_sample = K + self.u + 2 * K + 2

    def basis(self, w, s=R, z=None):
        z = self.z if z is None else z
        gr = wcov(np.hstack([z, self.p]), w)
        d = z.shape[1]
        u = np.linalg.svd(gr[:d, d:] @ sym_pow(gr[d:, d:], -0.5))[0]
        return u[:, :s]

    def iv(self, b, w):
        st = self.states @ b
        u = self.u
        c = wcov(np.hstack([st[u + 2 * K + 2], st[u + 2 * K + 3], st[u + K + 1], st[u]]), w)
        r = b.shape[1]
        sxe, sye, see = c[:r, 2 * r:], c[r:2 * r, 2 * r:], c[2 * r:, 2 * r:]
        wm = sym_pow(see, -1.0)
        return (sye @ wm @ sxe.T) @ np.linalg.inv(sxe @ wm @ sxe.T)


def re_of(a, ref=None):
    lam = np.log(np.linalg.eigvals(a).astype(complex)) / DT
    lam = np.array([complex(z.real, abs(z.imag)) for z in lam])
    return (lam[np.argmax(lam.real)] if ref is None else lam[np.argmin(abs(lam - ref))])


def draw(rng):
    c = np.zeros(N)
    left = N
    for s in rng.integers(0, N - L + 1, -(-N // L)):
        ln = min(L, left)
        c[s:s + ln] += 1
        left -= ln
    return c


kinds = ['held'] + ([] if o.held_only else ['refit', 'super'])
kinds += ['model', 'widen'] if o.model else []
res = {k: [] for k in kinds}
points = []
for lg in range(o.first, o.first + o.logs):
    lo = Log(simulate(np.random.default_rng(1000 + lg + int(1e6 * SN)), AD))
    ub = lo.basis(np.ones(len(lo.rows_k)))
    pt = re_of(lo.iv(ub, np.ones(lo.nw)))
    points.append(pt.real)
    us = lo.basis(np.ones(len(lo.rows_k)), SUP)
    reps = {k: [] for k in kinds}
    brng = np.random.default_rng(555 + lg)
    for _ in range(o.boot):
        c = draw(brng)
        wr, ww = c[lo.rows_k], c[lo.win_sample]
        reps['held'].append(re_of(lo.iv(ub, ww), pt).real)
        if o.held_only:
            continue
        reps['refit'].append(re_of(lo.iv(lo.basis(wr), ww), pt).real)
        inner = lo.basis(wr, R, lo.z @ us)
        reps['super'].append(re_of(lo.iv(us @ inner, ww), pt).real)
    if o.model:
        x, y = lo.xs[:-1], lo.xs[1:]
        xc = np.hstack([x, np.ones((N - 1, 1))])
        coef = np.linalg.lstsq(xc, y, rcond=None)[0]
        e = y - xc @ coef
        e -= e.mean(0)
        for _ in range(o.boot // 3):
            sim = Log(simulate(brng, coef[:2].T, e[brng.integers(0, N - 1, N + 500)], 500))
            b2 = sim.basis(np.ones(len(sim.rows_k)))
            reps['model'].append(re_of(sim.iv(b2, np.ones(sim.nw)), pt).real)
    if o.model:
        # least squares' rule (el_boot_widen_factor at full weight): the held
        # replicates widened about their median to the model-based spread
        # (IQR / 1.349) when that is wider, never narrowed
        def iqr(v):
            return np.subtract(*np.quantile(v, [0.75, 0.25])) / 1.349
        h = np.array(reps['held'])
        f = max(1.0, iqr(np.array(reps['model'])) / iqr(h))
        reps['widen'] = list(np.median(h) + f * (h - np.median(h)))
    for k in kinds:
        v = np.array(reps[k])
        v = v - np.median(v) + pt.real
        q1, q2 = np.quantile(v, [0.025, 0.975])
        res[k].append((q1 <= RE <= q2, q2 - q1))
sd = np.std(points, ddof=1)
print(f"length {N} lags {K} block {L} logs {o.logs} replicates {o.boot} sensor noise {SN}: "
      f"point mean {np.mean(points):.4f} sd {sd:.4f}")
for k in kinds:
    print(f"  {k:6s} coverage {np.mean([x[0] for x in res[k]]):.3f}  "
          f"w/sd {np.mean([x[1] for x in res[k]]) / (3.92 * sd):.3f}")

#!/usr/bin/python3
"""Reference values for tests/test_subspace.c, written to subspace_fixture.h
beside this script. Run with Debian's /usr/bin/python3 (python3-numpy,
python3-scipy). Seeded: the output is the same on every run. Nothing here
shares code with src/: the block-Hankel subspace identification is written
out from its textbook definition (Van Overschee & De Moor 1996; Peeters &
De Roeck 1999) on explicit window matrices with numpy linear algebra:

  scaled channels y = (x - mean) / std (population std);
  future F[:, w] = [y_t; ...; y_t+h-1], past P[:, w] = [y_t-1; ...; y_t-h]
  for t = h .. N-h (descending past, as the header of el_subspace
  documents; the C code stores it ascending, which permutes H's columns);
  H = (F - rowmean F)(P - rowmean P)' / m; SVD; O = U_n S_n^1/2;
  A = lstsq(O[:-p], O[p:]); eigenvalues.

The automatic horizon rule (el_subspace_choose_horizon) is written out
too: the mean autocorrelation of the channels, the envelope below 1/e,
four times the first zero crossing when its negative lobe reaches 3
standard errors (Bartlett's formula), the cap max_rows / p.

Data set: 3 mixed sensors of a 4-state system (0.9 Hz zeta 0.05 and 2.3 Hz
zeta 0.10, dt 0.02 s) driven by white process noise, 2000 samples, 20 dB
white sensor noise per channel.
"""
import math
import os

import numpy as np
import scipy
import scipy.linalg as sl

MASK = (1 << 64) - 1


class SplitMix:
    """splitmix64 (Steele, Lea & Flood 2014) + Box-Muller."""

    def __init__(self, seed):
        self.s = seed & MASK

    def u01(self):
        self.s = (self.s + 0x9E3779B97F4A7C15) & MASK
        z = self.s
        z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & MASK
        z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & MASK
        z ^= z >> 31
        return ((z >> 11) + 0.5) * 2.0 ** -53

    def normal(self):
        u1, u2 = self.u01(), self.u01()
        return math.sqrt(-2.0 * math.log(u1)) * math.cos(2.0 * math.pi * u2)


def modal_block(fn_hz, zeta):
    w = 2 * math.pi * fn_hz
    return np.array([[-zeta * w, w * math.sqrt(1 - zeta * zeta)],
                     [-w * math.sqrt(1 - zeta * zeta), -zeta * w]])


def simulate():
    dt, n = 0.02, 2000
    a = sl.block_diag(modal_block(0.9, 0.05), modal_block(2.3, 0.10))
    ad = sl.expm(a * dt)
    cm = np.array([[1.0, 0.3, 0.6, -0.2],
                   [-0.4, 0.8, 0.5, 0.7],
                   [0.2, -0.5, 1.0, 0.4]])
    rng = SplitMix(31337)
    s = np.zeros(4)
    for _ in range(500):        # burn-in towards the stationary state
        s = ad @ s + np.array([rng.normal() for _ in range(4)])
    y = np.zeros((n, 3))
    for k in range(n):
        y[k] = cm @ s + np.array([5.0, -2.0, 0.5])
        s = ad @ s + np.array([rng.normal() for _ in range(4)])
    sd = y.std(axis=0) * 10 ** (-20.0 / 20)
    for c in range(3):
        for k in range(n):
            y[k, c] += sd[c] * rng.normal()
    return y, dt, ad


def inv_sqrt(s, power):
    """s^power of a symmetric positive definite matrix by its eigenvectors."""
    lam, v = np.linalg.eigh(s)
    return (v * lam ** power) @ v.T


def hankel_svd(y, h, cva=False):
    """SVD of H (unweighted) or of Sff^-1/2 H Spp^-1/2 (canonical variate
    analysis); returns O's generator: (W1^-1 U, singular values)."""
    n, p = y.shape
    ys = (y - y.mean(axis=0)) / y.std(axis=0)
    ts = range(h, n - h + 1)
    f = np.array([ys[t:t + h].reshape(-1) for t in ts]).T
    past = np.array([ys[t - h:t][::-1].reshape(-1) for t in ts]).T
    f = f - f.mean(axis=1, keepdims=True)
    past = past - past.mean(axis=1, keepdims=True)
    m = f.shape[1]
    hk = f @ past.T / m
    if not cva:
        u, s, _ = np.linalg.svd(hk)
        return u, s
    sff, spp = f @ f.T / m, past @ past.T / m
    u, s, _ = np.linalg.svd(inv_sqrt(sff, -0.5) @ hk @ inv_sqrt(spp, -0.5))
    return inv_sqrt(sff, 0.5) @ u, s


def model(u, s, p, order):
    o = u[:, :order] * np.sqrt(s[:order])
    a = np.linalg.lstsq(o[:-p], o[p:], rcond=None)[0]
    ev = np.linalg.eigvals(a)
    return sorted(ev, key=lambda z: (-z.imag, z.real))


def auto_horizon(y, max_rows):
    n, p = y.shape
    hmin = max(3, 1 + -(-24 // p))
    hdata = (n + 1) // (2 + 4 * p)
    cap = max(max_rows // p, hmin)
    lmax = min(cap + 1, n // 2)
    # the lobe of a crossing is read to the default cap's lags, and on to
    # twice the crossing's lag while it stays at or below zero
    lread = max(lmax, min(max(200 // p, hmin) + 1, n // 2))
    lfar = max(lread, min(2 * lread + 2, n // 2))
    r = np.zeros(lfar + 1)
    for c in range(p):
        x = y[:, c] - y[:, c].mean()
        g0 = x @ x
        for k in range(lfar + 1):
            r[k] += (x[k:] @ x[:n - k]) / g0 / p
    k_env = lmax
    for k in range(lmax + 1):
        if np.max(np.abs(r[k:lmax + 1])) < math.exp(-1):
            k_env = k
            break
    k_zero = next((k for k in range(1, lmax + 1) if r[k] <= 0), 0)
    if k_zero > 0:
        # rule (b) counts the crossing when its negative lobe reaches 3
        # Bartlett (1946) standard errors: se(k)^2 = (1 + 2 sum_{j<k} r(j)^2) / n
        last = lread
        if all(r[k] <= 0 for k in range(k_zero, lread + 1)):
            last = max(lread, min(2 * k_zero + 2, n // 2))
        depth = 0.0
        for k in range(k_zero, last + 1):
            if r[k] > 0:
                break
            se = math.sqrt((1 + 2 * np.sum(r[1:k] ** 2)) / n)
            depth = max(depth, -r[k] / se)
        if depth < 3.0:
            k_zero = 0
    scale = k_env
    if k_zero > 0 and 4 * k_zero > scale:
        scale = 4 * k_zero
    return max(min(scale, cap, hdata), hmin), scale


def c_array(name, vals):
    vals = np.ravel(vals)
    body = ",\n    ".join(", ".join("%.17g" % v for v in vals[i:i + 4])
                          for i in range(0, len(vals), 4))
    return "static const double %s[%d] = {\n    %s\n};\n" % (name, len(vals), body)


def main():
    y, dt, ad = simulate()
    h = 10
    u, s = hankel_svd(y, h)
    orders = (4, 6)
    evs = {o: model(u, s, y.shape[1], o) for o in orders}
    uc, sc = hankel_svd(y, h, cva=True)
    evc = {o: model(uc, sc, y.shape[1], o) for o in orders}
    h_auto, scale = auto_horizon(y, 200)
    out = ["/* Generated by make_subspace_fixture.py (numpy %s, scipy %s): do not "
           "edit. */" % (np.__version__, scipy.__version__),
           "#ifndef SUBSPACE_FIXTURE_H", "#define SUBSPACE_FIXTURE_H", ""]
    out.append("#define SUB_FIX_N %d" % y.shape[0])
    out.append("#define SUB_FIX_P %d" % y.shape[1])
    out.append("#define SUB_FIX_DT %.17g" % dt)
    out.append("/* channels, column-major (sample k of channel c at [c * N + k]) */")
    out.append(c_array("sub_fix_y", y.T))
    out.append("/* horizon 10: singular values of H (h p = 30) */")
    out.append("#define SUB_FIX_H %d" % h)
    out.append(c_array("sub_fix_sv", s))
    for o in orders:
        out.append("/* order %d: eigenvalues {re, im}, sorted by Im descending, "
                   "then Re */" % o)
        out.append(c_array("sub_fix_mu%d" % o, [[z.real, z.imag] for z in evs[o]]))
    out.append("/* canonical variate analysis, horizon 10: canonical correlations */")
    out.append(c_array("sub_fix_cc", sc))
    for o in orders:
        out.append("/* CVA order %d: eigenvalues {re, im}, same order */" % o)
        out.append(c_array("sub_fix_cva_mu%d" % o, [[z.real, z.imag] for z in evc[o]]))
    tr = sorted(np.linalg.eigvals(ad), key=lambda z: (-z.imag, z.real))
    out.append("/* the simulated system's discrete eigenvalues (same order) */")
    out.append(c_array("sub_fix_mu_true", [[z.real, z.imag] for z in tr]))
    out.append("/* automatic horizon with max_rows 200 */")
    out.append("#define SUB_FIX_H_AUTO %d" % h_auto)
    out.append("#define SUB_FIX_SCALE_LAGS %d" % scale)
    out.append("#endif")
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "subspace_fixture.h")
    with open(path, "w") as f:
        f.write("\n".join(out) + "\n")
    print("singular values:", s[:10])
    for o in orders:
        print(o, evs[o])
    print("true", tr)
    print("cca", sc[:8])
    for o in orders:
        print("cva", o, evc[o])
    print("h_auto", h_auto, "scale", scale)


if __name__ == "__main__":
    main()

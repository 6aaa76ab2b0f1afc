#!/usr/bin/python3
"""Reference values for tests/test_estimators.c, written to
estimator_fixture.h. Run with Debian's /usr/bin/python3 (python3-numpy,
python3-scipy). Seeded: the output is the same on every run. Nothing here
shares code with src/: every estimator is written out from its published
definition on the raw data matrices (no reduced coordinates, no
whitening, no covariance sums), with numpy/scipy linear algebra.

Data sets (stored in the header, so C and Python see the same numbers):
  A  two mixed sensors of a growing oscillation (Re lambda = +0.04 1/s,
     1 Hz, dt 0.02 s), 400 samples, 30 dB sensor noise;
  B  one sensor of a two-mode system (1.1 Hz and 2.7 Hz), 600 samples,
     30 dB sensor noise (for the lag choice by BIC);
  C  three states driven by two measured inputs plus process noise and
     30 dB sensor noise, 500 samples (DMD with control under noise).
"""
import math
import numpy as np
import scipy.linalg as sl

MASK = (1 << 64) - 1


class SplitMix:
    """splitmix64 (Steele, Lea & Flood 2014) + Box-Muller, as in the tests."""

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


def rot_block(sigma, omega, dt):
    g = math.exp(sigma * dt)
    c, s = math.cos(omega * dt), math.sin(omega * dt)
    return g * np.array([[c, -s], [s, c]])


def add_noise(y, snr_db, rng):
    sd = y.std(axis=0) * 10 ** (-snr_db / 20)
    out = y.copy()
    for c in range(y.shape[1]):
        for k in range(y.shape[0]):
            out[k, c] += sd[c] * rng.normal()
    return out


def data_a():
    dt, n = 0.02, 400
    ad = rot_block(0.04, 2 * math.pi, dt)
    cm = np.array([[1.0, -0.4], [0.3, 2.0]])
    s = np.array([1.0, 0.0])
    y = np.zeros((n, 2))
    for k in range(n):
        y[k] = cm @ s + np.array([1.5, -3.0])
        s = ad @ s
    return add_noise(y, 30.0, SplitMix(2024)), dt


def data_b():
    dt, n = 0.02, 600
    z1, z2, w1, w2 = 0.02, 0.05, 2 * math.pi * 1.1, 2 * math.pi * 2.7
    ad = sl.block_diag(rot_block(-z1 * w1, w1 * math.sqrt(1 - z1 * z1), dt),
                       rot_block(-z2 * w2, w2 * math.sqrt(1 - z2 * z2), dt))
    cm = np.array([1.0, 0.0, 0.7, 0.0])
    s = np.array([1.0, 0.0, 1.0, 0.0])
    y = np.zeros((n, 1))
    for k in range(n):
        y[k, 0] = 2.0 + cm @ s
        s = ad @ s
    return add_noise(y, 30.0, SplitMix(77)), dt


def data_c():
    n = 500
    ad = np.array([[0.9, -0.2, 0.0], [0.1, 0.8, 0.3], [0.0, 0.05, 0.7]])
    bm = np.array([[1.0, -0.3], [0.0, 2.0], [0.5, 0.0]])
    c = np.array([0.5, -1.0, 2.0])
    rng = SplitMix(9)
    u = np.zeros((n, 2))
    for k in range(n):
        u[k, 0] = 3.0 + rng.normal()
        u[k, 1] = -1.0 + 0.5 * rng.normal()
    x = np.zeros((n, 3))
    s = np.zeros(3)
    for k in range(n):
        x[k] = s
        w = np.array([rng.normal() for _ in range(3)])
        s = ad @ s + bm @ u[k] + c + 0.1 * w
    return add_noise(x, 30.0, rng), u


def scaled(y):
    return (y - y.mean(axis=0)) / y.std(axis=0)


def pairs(ys):
    """X, Y as d x m with the pair means removed (the affine term)."""
    x, y = ys[:-1].T, ys[1:].T
    return x - x.mean(axis=1, keepdims=True), y - y.mean(axis=1, keepdims=True)


def eig_sorted(a):
    w = np.linalg.eigvals(a)
    return sorted(w, key=lambda z: (-z.imag, z.real))


def ls_dmd(ys):
    x, y = pairs(ys)
    return y @ np.linalg.pinv(x)


def fb_dmd(ys):
    # Dawson et al. 2016: A = (A_f A_b^-1)^(1/2); principal root (every
    # frequency here is far below a quarter of the sampling rate).
    x, y = pairs(ys)
    af = y @ np.linalg.pinv(x)
    ab = x @ np.linalg.pinv(y)
    return np.real(sl.sqrtm(af @ np.linalg.inv(ab)))


def tls_dmd(ys):
    # Hemati et al. 2017: project X and Y onto the leading r right singular
    # vectors of the stacked [X; Y], then A = Ybar Xbar^+.
    x, y = pairs(ys)
    r = x.shape[0]
    _, _, vt = np.linalg.svd(np.vstack([x, y]), full_matrices=False)
    p = vt[:r].T @ vt[:r]
    return (y @ p) @ np.linalg.pinv(x @ p)


def windows(ys):
    """Lags 0: x = s[t], y = s[t+1], instruments s[t-1], s[t-2]."""
    m = ys.shape[0] - 1              # pairs; states t = 0..m
    idx = np.arange(2, m)            # t with t-2 >= 0 and t+1 <= m
    x, y = ys[idx].T, ys[idx + 1].T
    z = np.vstack([ys[idx - 1].T, ys[idx - 2].T])
    cen = lambda a: a - a.mean(axis=1, keepdims=True)
    return cen(x), cen(y), cen(z)


def iv_est(ys):
    # Extended instrumental variables (Soderstrom & Stoica 1983) with the
    # two-stage least-squares weight W = (Z Z')^-1.
    x, y, z = windows(ys)
    w = np.linalg.pinv(z @ z.T)
    sxz, syz = x @ z.T, y @ z.T
    return syz @ w @ sxz.T @ np.linalg.inv(sxz @ w @ sxz.T)


def ssi_est(ys):
    # Weighted block Hankel of [x; y] against the past, SVD, observability
    # O = [O1; O2], A = O2 O1^-1 (shift invariance).
    x, y, z = windows(ys)
    r = x.shape[0]
    sxx = x @ x.T
    wx = np.real(sl.inv(sl.sqrtm(sxx)))
    wz = np.real(sl.inv(sl.sqrtm(z @ z.T)))
    h = np.vstack([x @ z.T, y @ z.T])
    hw = np.kron(np.eye(2), wx) @ h @ wz
    u, _, _ = np.linalg.svd(hw)
    o = np.kron(np.eye(2), np.real(sl.sqrtm(sxx))) @ u[:, :r]
    return o[r:] @ np.linalg.inv(o[:r])


def bic_lags(y, kmax):
    # Schwarz (1978) BIC of the one-step least-squares delay models
    # K = 0..kmax on the same rows k = kmax..N-2, each fitted by lstsq.
    ys = scaled(y)
    n, nc = ys.shape
    rows = np.arange(kmax, n - 1)
    m = len(rows)
    target = ys[rows + 1]
    target = target - target.mean(axis=0)
    out = []
    for k in range(kmax + 1):
        reg = np.hstack([ys[rows - j] for j in range(k + 1)])
        reg = reg - reg.mean(axis=0)
        coef = np.linalg.lstsq(reg, target, rcond=None)[0]
        res = target - reg @ coef
        s = res.T @ res / m
        p = nc * (nc * (k + 1) + 1)
        out.append(m * np.linalg.slogdet(s)[1] + p * math.log(m))
    return int(np.argmin(out)), min(out), m


def dmdc(x, u):
    # Least squares of Y on [X; U; 1] in physical units.
    reg = np.hstack([x[:-1], u[:-1], np.ones((x.shape[0] - 1, 1))])
    g = np.linalg.lstsq(reg, x[1:], rcond=None)[0].T
    return g[:, :3], g[:, 3:5], g[:, 5]


def c_array(name, vals):
    vals = np.ravel(vals)
    body = ",\n    ".join(", ".join("%.17g" % v for v in vals[i:i + 4])
                          for i in range(0, len(vals), 4))
    return "static const double %s[%d] = {\n    %s\n};\n" % (name, len(vals), body)


def main():
    a, dt_a = data_a()
    b, dt_b = data_b()
    cx, cu = data_c()
    ys = scaled(a)
    refs = {}
    for name, fn in (("ls", ls_dmd), ("fb", fb_dmd), ("tls", tls_dmd),
                     ("iv", iv_est), ("ssi", ssi_est)):
        ev = eig_sorted(fn(ys))
        refs[name] = [ev[0].real, ev[0].imag]
    kbest, bic, mrows = bic_lags(b, 30)
    ad_c, b_c, c_c = dmdc(cx, cu)
    out = ["/* Generated by make_estimator_fixture.py (numpy %s, scipy %s): do not "
           "edit. */" % (np.__version__, __import__("scipy").__version__),
           "#ifndef ESTIMATOR_FIXTURE_H", "#define ESTIMATOR_FIXTURE_H", ""]
    out.append("#define EST_FIX_A_N %d" % a.shape[0])
    out.append("#define EST_FIX_A_DT %.17g" % dt_a)
    out.append(c_array("est_fix_a", a.T))
    out.append("/* mu (discrete eigenvalue with Im >= 0) of each estimator on A, "
               "scaled channels, lags 0, full rank: {re, im}. */")
    for name in ("ls", "fb", "tls", "iv", "ssi"):
        out.append(c_array("est_fix_mu_" + name, refs[name]))
    out.append("#define EST_FIX_B_N %d" % b.shape[0])
    out.append("#define EST_FIX_B_DT %.17g" % dt_b)
    out.append(c_array("est_fix_b", b.T))
    out.append("/* BIC lag choice on B over 0..30 (same rows for every K). */")
    out.append("#define EST_FIX_B_KMAX 30")
    out.append("#define EST_FIX_B_LAGS %d" % kbest)
    out.append("#define EST_FIX_B_BIC %.17g" % bic)
    out.append("#define EST_FIX_B_ROWS %d" % mrows)
    out.append("#define EST_FIX_C_N %d" % cx.shape[0])
    out.append(c_array("est_fix_c_x", cx.T))
    out.append(c_array("est_fix_c_u", cu.T))
    out.append("/* least squares of x[k+1] on [x[k]; u[k]; 1], physical units. */")
    out.append(c_array("est_fix_c_ad", ad_c.T))
    out.append(c_array("est_fix_c_b", b_c.T))
    out.append(c_array("est_fix_c_c", c_c))
    out.append("#endif")
    with open("estimator_fixture.h", "w") as f:
        f.write("\n".join(out) + "\n")


if __name__ == "__main__":
    main()

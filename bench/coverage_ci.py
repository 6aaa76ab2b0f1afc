#!/usr/bin/env python3
"""Exact (Clopper-Pearson) 95 % intervals for the coverage cells of a
`calibrate` table: reads calibrate's output on standard input (or the files
named) and prints, per case and length, covered / ok, the coverage and its
interval, marking with '*' a cell whose interval excludes 0.95 (truly off
the nominal level) and with 'out' one outside the 0.92-0.98 band.

Clopper & Pearson (1934), Biometrika 26(4): the interval inverts two
one-sided binomial tests; computed here by bisection on the binomial CDF
(no scipy needed). With 60 logs a cell's standard error near 0.95 is
sqrt(0.95 x 0.05 / 60) = 0.028, with 240 logs 0.014.

Usage: calibrate --logs 240 ... | python3 bench/coverage_ci.py
"""
import math
import sys


def binom_cdf(k, n, p):
    if p <= 0.0:
        return 1.0
    if p >= 1.0:
        return 1.0 if k >= n else 0.0
    lp, lq = math.log(p), math.log1p(-p)
    return sum(math.exp(math.lgamma(n + 1) - math.lgamma(i + 1) - math.lgamma(n - i + 1)
                        + i * lp + (n - i) * lq) for i in range(k + 1))


def bisect(pred):
    lo, hi = 0.0, 1.0
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if pred(mid):
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


def clopper_pearson(k, n, alpha=0.05):
    lo = 0.0 if k == 0 else bisect(lambda p: 1.0 - binom_cdf(k - 1, n, p) < alpha / 2)
    hi = 1.0 if k == n else bisect(lambda p: binom_cdf(k, n, p) > alpha / 2)
    return lo, hi


def main():
    streams = [open(f) for f in sys.argv[1:]] or [sys.stdin]
    for s in streams:
        for line in s:
            p = line.split()
            # calibrate's rows: case n ok cov_re cov_zeta p_stab wrong conf block
            # w/sd bias/sd method above held
            if len(p) != 14 or not p[1].isdigit() or not p[2].isdigit():
                continue
            ok = int(p[2])
            if ok == 0:
                print(f"{p[0]:14s} {p[1]:>6s}   no bounds given (held {p[13]})")
                continue
            k = round(float(p[3]) * ok)
            lo, hi = clopper_pearson(k, ok)
            mark = "*" if hi < 0.95 or lo > 0.95 else " "
            band = "" if 0.92 <= k / ok <= 0.98 else " out"
            print(f"{p[0]:14s} {p[1]:>6s} {k:4d}/{ok:<4d} {k / ok:.3f} "
                  f"[{lo:.3f}, {hi:.3f}]{mark}{band}")


if __name__ == "__main__":
    main()

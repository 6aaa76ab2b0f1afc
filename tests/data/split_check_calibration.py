#!/usr/bin/env python3
"""False alarms of the split-half drift check (docs/method.md, "Drift
inside the window") on logs whose dynamics do NOT drift, and its power on
logs whose damping drifts like the fan-warmup demo.

Each log: a two-state scaled rotation dx/dt = [[-s, -w], [w, -s]] x + noise
(0.8 Hz, q = 0.04 per s), sampled exactly (Ad = e^{-s dt} R(w dt), Qd = q
(1 - e^{-2 s dt}) / (2 s) I, a closed form because A commutes with its
transpose), plus white sensor noise 0.01. The drifting case changes s
linearly over the log, like `eigenlog demo fan-warmup`. Every log is
assessed by the eigenlog binary given as argv[1] (default build/rel/eigenlog);
the script prints how many logs the check flags.

Usage: python3 tests/data/split_check_calibration.py [build/rel/eigenlog] [seeds]
Needs python3-numpy. Takes about a second per log.
"""
import json, os, subprocess, sys, tempfile
import numpy as np

BIN = sys.argv[1] if len(sys.argv) > 1 else "build/rel/eigenlog"
SEEDS = int(sys.argv[2]) if len(sys.argv) > 2 else 30
W = 2 * np.pi * 0.8
Q = 0.04


def simulate(rng, s0, s1, dt, n):
    x = np.zeros(2)
    out = np.empty((n, 2))
    c, sn = np.cos(W * dt), np.sin(W * dt)
    rot = np.array([[c, -sn], [sn, c]])
    for k in range(n):
        s = s0 + (s1 - s0) * k / (n - 1)
        g = np.sqrt(Q * (1 - np.exp(-2 * s * dt)) / (2 * s))
        x = np.exp(-s * dt) * rot @ x + g * rng.standard_normal(2)
        out[k] = x
    return out + 0.01 * rng.standard_normal((n, 2))


def flagged(path):
    r = subprocess.run([BIN, "assess", path, "--json", "-"], capture_output=True, text=True)
    j = json.loads(r.stdout)
    sh = j["input"]["nonstationarity"]["split_halves"]
    return sh["drift"], sh["z_decay_rate"], sh["z_frequency"]


def run(name, s0, s1, dt, seconds):
    rng = np.random.default_rng(20261204)
    n = int(round(seconds / dt))
    hits, zs = 0, []
    with tempfile.TemporaryDirectory() as d:
        for seed in range(SEEDS):
            y = simulate(rng, s0, s1, dt, n)
            p = os.path.join(d, "log.csv")
            with open(p, "w") as f:
                f.write("time [s],h,v\n")
                for k in range(n):
                    f.write("%.3f,%.5f,%.5f\n" % (k * dt, y[k, 0], y[k, 1]))
            drift, zd, zf = flagged(p)
            hits += bool(drift)
            zs.append(max(abs(zd or 0), abs(zf or 0)))
    print("%-44s flagged %2d of %d; max |z| median %.2f, largest %.2f"
          % (name, hits, SEEDS, float(np.median(zs)), max(zs)))


run("steady s=0.24 1/s, 2400 s at 10 Hz", 0.24, 0.24, 0.1, 2400)
run("steady s=0.24 1/s, 300 s at 10 Hz", 0.24, 0.24, 0.1, 300)
run("steady s=0.05 1/s, 600 s at 20 Hz", 0.05, 0.05, 0.05, 600)
run("drift s 0.40 -> 0.08 1/s, 2400 s at 10 Hz", 0.40, 0.08, 0.1, 2400)
run("drift s 0.28 -> 0.24 1/s, 300 s at 10 Hz", 0.28, 0.24, 0.1, 300)

#!/usr/bin/python3
"""fresh_family: adversarial QA of `eigenlog assess` (default options) on
multi-sensor logs drawn independently of bench/subspace_study.c's family M
(docs/accuracy.md, "Fresh multi-sensor logs (q, 2026-12-05)").

The family (issue 10's ranges: 2-8 sensors, 1-3 modes, damping ratio
0.02-0.30, sensor SNR 30/20/10 dB, 20-300 samples per period of the slowest
mode, a share of growing systems), with draws and sensors of its own:

- physics: every mode an oscillator q'' + 2 zeta w q' + w^2 q = f, the
  force f held over each sample (zero-order hold, so the sampled system's
  eigenvalues are exactly exp(lambda dt)); real mode shapes drawn per
  sensor; the force scaled so every mode has about the same velocity
  variance (slow modes dominate displacements, fast ones accelerations);
- sensors of five kinds in their own units, gains and offsets:
  displacement (mm, offset), velocity (mm/s), acceleration (m/s2, the
  state part -w^2 q - 2 zeta w q'), pressure-like (kPa, a mix of q and
  q'/w, offset 150-2000) and strain (microstrain, offset 100-800);
- sampling interval 2 ms - 100 ms; the slowest mode at 20-300 samples per
  period (log-uniform; forced to 20 in the `slow20` variant); the next
  modes 1.3-2.8 times faster (1.04-1.12 in the `close` variant), none
  above a quarter of the sampling rate;
- stationary logs (process noise, burn-in; 100-250 periods of the slowest
  mode, 4,000-30,000 samples) and growing ones (one mode with damping ratio
  -0.002 .. -0.010, process noise and a random start, growing 4-20 fold over
  the log);
- sensor noise white, or AR(1) coloured (`coloured`, coefficient 0.5-0.9),
  at 10^(-SNR/20) of each clean channel's standard deviation (the same draws
  scaled for the three SNRs); a slow drift on one or two channels
  (`drift`, 0.5-2 channel standard deviations over the log);
- files: time in s, in epoch milliseconds, ISO 8601 with Z or without a
  zone, day-first dot dates in a semicolon file with decimal commas, a row
  of units under the header; a few empty cells (runs of 1-3) and a few
  missing rows; values written with fixed decimals fine enough for the
  noise.

A log is `core` when it has none of coloured, drift, close (issue 10's
family proper); the targets are scored on core logs and every variant is
reported beside them.

Usage (numpy, scipy; /usr/bin/python3):
  bench/fresh_family.py gen DIR [--systems 100] [--seed 5120512] [--six 20]
  bench/fresh_family.py run DIR [--eigenlog build/rel/eigenlog] [--jobs 1]
                              [--out out] [--only 5,13] [--extra "--method iv"]
  bench/fresh_family.py score DIR [--verbose] [--out out] [--only 5,13]
`gen` writes DIR/logs/*.csv and DIR/truth.json; `run` assesses every log
with default options (`nice -n 10 eigenlog assess LOG --json J`, text
report kept beside it) and skips logs already done; `score` prints the
tables. `--six N` adds N draws of issue 10's 6-sensor example (modes
1.30 Hz zeta 0.030 and 0.384 Hz zeta 0.252, 100 Hz, 20 dB, 30,000 samples)
seen through this family's sensor kinds.
"""
import argparse
import json
import math
import os
import subprocess
import sys
import time

import numpy as np
from scipy.linalg import expm
from scipy.optimize import linear_sum_assignment
from scipy.signal import lfilter

SNRS = (30.0, 20.0, 10.0)
KINDS = ("disp", "vel", "acc", "press", "strain")
UNITS = {"disp": "mm", "vel": "mm/s", "acc": "m/s2", "press": "kPa", "strain": "ue"}
DTS = (0.002, 0.005, 0.01, 0.02, 0.05, 0.1)


def draw_system(rng, idx, six=False):
    """One system: modes, sensors, file format and variants (a dict)."""
    s = {"id": idx, "variants": []}
    if six:
        s["dt"] = 0.01
        s["fn"] = [1.30, 0.384]
        s["zeta"] = [0.03, 0.252]
        s["growing"] = False
        s["n_sensors"] = 6
        s["n_samples"] = 30000
        s["spp"] = 1.0 / (0.384 * 0.01)
        s["variants"].append("six")
    else:
        s["dt"] = float(rng.choice(DTS))
        n_modes = int(rng.integers(1, 4))
        slow20 = rng.random() < 0.2
        spp = 20.0 if slow20 else float(np.exp(rng.uniform(np.log(20), np.log(300))))
        if slow20:
            s["variants"].append("slow20")
        close = n_modes >= 2 and rng.random() < 0.2
        if close:
            s["variants"].append("close")
        fn = [1.0 / (spp * s["dt"])]
        for m in range(1, n_modes):
            for _ in range(50):
                r = rng.uniform(1.04, 1.12) if (close and m == 1) else rng.uniform(1.3, 2.8)
                if fn[-1] * r * s["dt"] <= 0.25:
                    break
            else:
                r = 0.25 / (fn[-1] * s["dt"])
            fn.append(fn[-1] * r)
        zeta = [float(0.02 * np.exp(np.log(15.0) * rng.random())) for _ in fn]
        s["fn"], s["zeta"], s["spp"] = fn, zeta, spp
        s["growing"] = rng.random() < 0.25
        if s["growing"]:
            g = int(rng.integers(0, n_modes))
            zg = -float(rng.uniform(0.002, 0.010))
            growth = float(np.exp(rng.uniform(np.log(4), np.log(20))))
            sigma = -zg * 2 * math.pi * fn[g]
            n = int(math.ceil(math.log(growth) / sigma / s["dt"]))
            if n > 30000 or n < 2000:     # keep the length, move the rate
                n = min(max(n, 2000), 30000)
                zg = -math.log(growth) / (n * s["dt"]) / (2 * math.pi * fn[g])
            zeta[g] = zg
            s["growing_mode"] = g
            s["growth"] = growth
            s["n_samples"] = n
        else:
            periods = rng.uniform(100, 250)
            s["n_samples"] = int(min(max(periods * spp, 4000), 30000))
        s["n_sensors"] = int(rng.integers(2, 9))
    p = s["n_sensors"]
    s["kinds"] = [str(rng.choice(KINDS)) for _ in range(p)]
    if six:   # issue 10's 6 sensors as two of each of three kinds
        s["kinds"] = ["disp", "acc", "press", "disp", "acc", "strain"]
    nm = len(s["fn"])
    while True:
        phi = rng.normal(size=(p, nm))
        if np.all(np.max(np.abs(phi), axis=0) >= 0.5):
            break
    s["phi"] = phi.tolist()
    s["press_mix"] = rng.uniform(-1, 1, size=(p, nm, 2)).tolist()
    s["gain"] = [float(np.exp(rng.uniform(np.log(0.05), np.log(50)))) for _ in range(p)]
    s["offset"] = []
    for k in s["kinds"]:
        s["offset"].append({"disp": rng.uniform(-5, 40), "vel": 0.0, "acc": 0.0,
                            "press": rng.uniform(150, 2000),
                            "strain": rng.uniform(100, 800)}[k])
    if not six:
        s["coloured"] = bool(rng.random() < 0.25)
        if s["coloured"]:
            s["variants"].append("coloured")
            s["ar"] = [float(rng.uniform(0.5, 0.9)) for _ in range(p)]
        s["drift"] = bool(rng.random() < 0.15)
        if s["drift"]:
            s["variants"].append("drift")
            s["drift_ch"] = sorted(set(int(c) for c in rng.integers(0, p, size=int(rng.integers(1, 3)))))
            s["drift_sd"] = float(rng.uniform(0.5, 2.0))
        s["format"] = str(rng.choice(["sec", "ms", "iso", "isolocal", "eu", "unitsrow"],
                                     p=[0.3, 0.2, 0.2, 0.05, 0.1, 0.15]))
        s["gaps"] = bool(rng.random() < 0.4)
    else:
        s["coloured"] = s["drift"] = False
        s["format"] = "sec"
        s["gaps"] = False
    s["core"] = not (s["coloured"] or s["drift"] or "close" in s["variants"])
    s["seed"] = int(rng.integers(0, 2**31))
    return s


def simulate(s):
    """Clean channels (N x p), unit noise draws (N x p), per-channel sd."""
    rng = np.random.default_rng(s["seed"])
    dt, N, p = s["dt"], s["n_samples"], s["n_sensors"]
    fn, zeta = np.array(s["fn"]), np.array(s["zeta"])
    nm = len(fn)
    w = 2 * math.pi * fn
    # continuous modal model, state (q_m, q'_m) per mode; ZOH force per mode
    A = np.zeros((2 * nm, 2 * nm))
    B = np.zeros((2 * nm, nm))
    for m in range(nm):
        A[2 * m, 2 * m + 1] = 1.0
        A[2 * m + 1, 2 * m] = -w[m] ** 2
        A[2 * m + 1, 2 * m + 1] = -2 * zeta[m] * w[m]
        B[2 * m + 1, m] = 1.0
    n = 2 * nm
    M = np.zeros((n + nm, n + nm))
    M[:n, :n] = A * dt
    M[:n, n:] = B * dt
    E = expm(M)
    Ad, Bd = E[:n, :n], E[:n, n:]
    # force intensity: about unit velocity variance per mode
    sig = np.sqrt(4 * np.maximum(np.abs(zeta), 0.01) * w / dt)
    if s["growing"]:
        x = np.zeros(n)
        amp = rng.uniform(1, 3)
        for m in range(nm):
            ph = rng.uniform(0, 2 * math.pi)
            x[2 * m] = amp * math.cos(ph) / w[m]
            x[2 * m + 1] = amp * math.sin(ph)
        burn = 0
    else:
        x = np.zeros(n)
        slow = np.min(np.abs(zeta) * w)
        burn = int(min(math.ceil(10.0 / slow / dt), 200000))
    F = rng.normal(size=(burn + N, nm)) * sig
    X = np.empty((N, n))
    for k in range(burn):
        x = Ad @ x + Bd @ F[k]
    for k in range(N):
        X[k] = x
        x = Ad @ x + Bd @ F[burn + k]
    q, qd = X[:, 0::2], X[:, 1::2]
    acc = -(w ** 2) * q - 2 * zeta * w * qd
    phi = np.array(s["phi"])
    pm = np.array(s["press_mix"])
    Y = np.empty((N, p))
    for r, kind in enumerate(s["kinds"]):
        if kind in ("disp", "strain"):
            v = q @ phi[r]
        elif kind == "vel":
            v = qd @ phi[r]
        elif kind == "acc":
            v = acc @ phi[r]
        else:
            v = (q * pm[r, :, 0] * w + qd * pm[r, :, 1]) @ phi[r] / w.mean()
        Y[:, r] = v
    sd = Y.std(axis=0)
    Y = Y / sd * np.array(s["gain"])          # channel sd = its gain
    sd = np.array(s["gain"])
    noise = rng.normal(size=(N, p))
    if s.get("coloured"):
        for r in range(p):
            a = s["ar"][r]
            e = np.concatenate([rng.normal(size=200), noise[:, r]])
            noise[:, r] = lfilter([math.sqrt(1 - a * a)], [1.0, -a], e)[200:]
    drift = np.zeros((N, p))
    if s.get("drift"):
        t = np.linspace(0, 1, N)
        for r in s["drift_ch"]:
            shape = t if rng.random() < 0.5 else np.sin(math.pi * t * rng.uniform(0.3, 1.0))
            drift[:, r] = s["drift_sd"] * sd[r] * shape * rng.choice([-1, 1])
    return Y, noise, sd, drift


def time_texts(s, N):
    dt = s["dt"]
    fmt = s["format"]
    t0_epoch = 1764921600 + s["id"] * 3600     # 2025-12-05 08:00 UTC + id hours
    k = np.arange(N)
    if fmt in ("sec", "unitsrow"):
        dec = max(0, int(math.ceil(-math.log10(dt) - 1e-9)))
        return ["%.*f" % (dec, 12.5 + i * dt) for i in k]
    if fmt == "ms":
        return ["%d" % (t0_epoch * 1000 + int(round(i * dt * 1000))) for i in k]
    out = []
    for i in k:
        ms = int(round(i * dt * 1000))
        tt = time.gmtime(t0_epoch + ms // 1000)
        frac = ms % 1000
        if fmt == "iso":
            out.append(time.strftime("%Y-%m-%dT%H:%M:%S", tt) + ".%03dZ" % frac)
        elif fmt == "isolocal":
            out.append(time.strftime("%Y-%m-%d %H:%M:%S", tt) + ".%03d" % frac)
        else:   # eu
            out.append(time.strftime("%d.%m.%Y %H:%M:%S", tt) + ",%03d" % frac)
    return out


def write_log(path, s, Y, noise, sd, drift, snr):
    rng = np.random.default_rng(s["seed"] + 1)
    N, p = Y.shape
    f = 10 ** (-snr / 20)
    V = np.array(s["offset"]) + Y + drift + f * sd * noise
    names = ["%s_%d" % (k, r + 1) for r, k in enumerate(s["kinds"])]
    units = [UNITS[k] for k in s["kinds"]]
    # fixed decimals: a step at most 1/20 of the 30 dB noise sd
    dec = [max(0, int(math.ceil(-math.log10(sd[r] * 10 ** -1.5 / 20)))) for r in range(p)]
    blank = np.zeros((N, p), bool)
    skip = np.zeros(N, bool)
    if s["gaps"]:
        for _ in range(int(rng.integers(2, 6))):
            r = int(rng.integers(0, p))
            k0 = int(rng.integers(10, N - 10))
            blank[k0:k0 + int(rng.integers(1, 4)), r] = True
        for _ in range(int(rng.integers(0, 3))):
            k0 = int(rng.integers(10, N - 10))
            skip[k0:k0 + int(rng.integers(1, 3))] = True
    times = time_texts(s, N)
    fmt = s["format"]
    sep = ";" if fmt == "eu" else ","
    with open(path, "w") as fh:
        if fmt == "sec":
            fh.write(sep.join(["t [s]"] + ["%s [%s]" % (a, u) for a, u in zip(names, units)]) + "\n")
        elif fmt == "ms":
            fh.write(sep.join(["time_ms"] + ["%s [%s]" % (a, u) for a, u in zip(names, units)]) + "\n")
        elif fmt == "unitsrow":
            fh.write(sep.join(["time"] + names) + "\n")
            fh.write(sep.join(["s"] + units) + "\n")
        else:
            fh.write(sep.join(["timestamp"] + ["%s [%s]" % (a, u) for a, u in zip(names, units)]) + "\n")
        for k in range(N):
            if skip[k]:
                continue
            cells = [times[k]]
            for r in range(p):
                if blank[k, r]:
                    cells.append("")
                else:
                    c = "%.*f" % (dec[r], V[k, r])
                    if fmt == "eu":
                        c = c.replace(".", ",")
                    cells.append(c)
            fh.write(sep.join(cells) + "\n")


def cmd_gen(a):
    os.makedirs(os.path.join(a.dir, "logs"), exist_ok=True)
    rng = np.random.default_rng(a.seed)
    systems = [draw_system(rng, i) for i in range(a.systems)]
    systems += [draw_system(rng, a.systems + j, six=True) for j in range(a.six)]
    logs = []
    for s in systems:
        Y, noise, sd, drift = simulate(s)
        snrs = (20.0,) if "six" in s["variants"] else SNRS
        for snr in snrs:
            name = "s%03d_%02ddB.csv" % (s["id"], int(snr))
            write_log(os.path.join(a.dir, "logs", name), s, Y, noise, sd, drift, snr)
            logs.append({"file": name, "system": s["id"], "snr": snr})
    with open(os.path.join(a.dir, "truth.json"), "w") as fh:
        json.dump({"seed": a.seed, "systems": systems, "logs": logs}, fh, indent=1)
    print("%d systems, %d logs in %s" % (len(systems), len(logs), a.dir))


def cmd_run(a):
    truth = json.load(open(os.path.join(a.dir, "truth.json")))
    out = os.path.join(a.dir, a.out)
    os.makedirs(out, exist_ok=True)
    todo = [lg for lg in truth["logs"] if selected(a, lg)
            and not os.path.exists(os.path.join(out, lg["file"] + ".rc"))]
    procs = []
    t0 = time.time()
    for i, lg in enumerate(todo):
        base = os.path.join(out, lg["file"])
        cmd = ["nice", "-n", "10", a.eigenlog, "assess", os.path.join(a.dir, "logs", lg["file"]),
               "--json", base + ".json"] + a.extra.split()
        fo, fe = open(base + ".txt", "w"), open(base + ".err", "w")
        procs.append((subprocess.Popen(cmd, stdout=fo, stderr=fe), base, time.time(), fo, fe))
        while len(procs) >= a.jobs or (i == len(todo) - 1 and procs):
            for pr in list(procs):
                if pr[0].poll() is not None:
                    pr[3].close()
                    pr[4].close()
                    with open(pr[1] + ".rc", "w") as fh:
                        fh.write("%d %.2f\n" % (pr[0].returncode, time.time() - pr[2]))
                    procs.remove(pr)
            if len(procs) >= a.jobs or (i == len(todo) - 1 and procs):
                time.sleep(0.05)
    print("ran %d logs in %.0f s" % (len(todo), time.time() - t0))


def selected(a, lg):
    """--only: comma-separated system numbers (5,13) or file names."""
    if not a.only:
        return True
    keys = set(k.strip() for k in a.only.split(",") if k.strip())
    return lg["file"] in keys or str(lg["system"]) in keys


def true_lambdas(s):
    out = []
    for f, z in zip(s["fn"], s["zeta"]):
        w = 2 * math.pi * f
        out.append(complex(-z * w, w * math.sqrt(1 - z * z)))
    return out


def score_one(s, d):
    """(all modes within 5 % / 0.05, worst df, worst dzeta, per-mode list)."""
    est = []
    for m in d.get("modes", []):
        lam = m.get("lambda") or {}
        re, im = lam.get("re"), lam.get("im")
        if re is None or im is None:
            continue
        est.append(complex(re, abs(im)))
    tru = true_lambdas(s)
    if not est:
        return False, float("inf"), float("inf"), []
    C = np.array([[abs(t - e) for e in est] for t in tru])
    ri, ci = linear_sum_assignment(C)
    ok, wf, wz, per = len(ri) == len(tru), 0.0, 0.0, []
    for i, j in zip(ri, ci):
        e = est[j]
        fn = abs(e) / (2 * math.pi)
        z = -e.real / abs(e) if abs(e) > 0 else float("nan")
        ef = abs(fn - s["fn"][i]) / s["fn"][i]
        ez = abs(z - s["zeta"][i])
        per.append((s["fn"][i], s["zeta"][i], fn, z))
        if not (ef <= 0.05 and ez <= 0.05):
            ok = False
        wf, wz = max(wf, ef), max(wz, ez)
    return ok, wf, wz, per


def cmd_score(a):
    truth = json.load(open(os.path.join(a.dir, "truth.json")))
    systems = {s["id"]: s for s in truth["systems"]}
    rows = []
    for lg in truth["logs"]:
        if not selected(a, lg):
            continue
        s = systems[lg["system"]]
        base = os.path.join(a.dir, a.out, lg["file"])
        if not os.path.exists(base + ".rc"):
            continue
        rc, secs = open(base + ".rc").read().split()
        rc, secs = int(rc), float(secs)
        row = {"file": lg["file"], "snr": lg["snr"], "s": s, "rc": rc, "secs": secs}
        txt = open(base + ".txt").read() + open(base + ".err").read()
        row["nan_text"] = any(w in txt.lower().split() for w in ("nan", "-nan", "inf", "-inf"))
        if rc == 0 and os.path.exists(base + ".json"):
            d = json.load(open(base + ".json"))
            v = d["verdict"]
            ok, wf, wz, per = score_one(s, d)
            stab, p = v.get("stability"), v.get("p_stable")
            und = stab in ("undecided", "marginal") or bool(v.get("ambiguous"))
            wrong = False
            if not und:
                if s["growing"] and stab == "stable" and p is not None and p >= 0.95:
                    wrong = True
                if not s["growing"] and stab == "unstable" and p is not None and p <= 0.05:
                    wrong = True
            row.update(ok=ok, wf=wf, wz=wz, per=per, stab=stab, p=p, und=und, wrong=wrong,
                       cause=v.get("cause"), method=d["model"]["method"],
                       warn=[w["code"] for w in d.get("warning_details", [])],
                       nmodes=len(d.get("modes", [])))
        else:
            row.update(ok=False, und=False, wrong=False, err=open(base + ".err").read().strip())
        rows.append(row)

    def table(title, sel):
        print("\n%s" % title)
        print("| SNR | logs | every mode within 5 % / 0.05 | confidently wrong | undecided | failed runs |")
        print("| --- | --- | --- | --- | --- | --- |")
        for snr in SNRS:
            rs = [r for r in rows if r["snr"] == snr and sel(r)]
            if not rs:
                continue
            n = len(rs)
            ok = sum(r["ok"] for r in rs)
            wr = sum(r["wrong"] for r in rs)
            un = sum(r["und"] for r in rs)
            fl = sum(r["rc"] != 0 for r in rs)
            print("| %.0f dB | %d | %.0f %% (%d) | %d | %.0f %% (%d) | %d |" %
                  (snr, n, 100.0 * ok / n, ok, wr, 100.0 * un / n, un, fl))

    print("fresh family: %d logs scored (%s)" % (len(rows), a.dir))
    table("every drawn system (all variants)", lambda r: "six" not in r["s"]["variants"])
    table("core (white noise, no drift, no close modes)", lambda r: r["s"]["core"] and "six" not in r["s"]["variants"])
    for var in ("slow20", "coloured", "drift", "close"):
        table("variant %s" % var, lambda r, v=var: v in r["s"]["variants"])
    for fmt in ("sec", "ms", "iso", "isolocal", "eu", "unitsrow"):
        table("format %s (all variants)" % fmt, lambda r, f=fmt: r["s"]["format"] == f and "six" not in r["s"]["variants"])
    table("growing systems (all variants)", lambda r: r["s"]["growing"] and "six" not in r["s"]["variants"])
    six = [r for r in rows if "six" in r["s"]["variants"]]
    if six:
        good = sum(r["ok"] and r.get("p") is not None and r["p"] >= 0.95 for r in six)
        print("\nissue 10's 6-sensor example, %d draws at 20 dB: both modes within 5 %% / 0.05 "
              "with P(stable) >= 0.95 in %d" % (len(six), good))
    nan = [r["file"] for r in rows if r["nan_text"]]
    print("\ntext reports with nan/inf: %d %s" % (len(nan), " ".join(nan[:10])))
    fails = [r for r in rows if r["rc"] != 0]
    print("failed runs: %d" % len(fails))
    for r in fails:
        print("  %s rc %d: %s" % (r["file"], r["rc"], r.get("err", "")[:300].replace("\n", " | ")))
    print("cpu: %.0f s wall total, max %.1f s" % (sum(r["secs"] for r in rows),
                                                  max([r["secs"] for r in rows] or [0])))
    if a.verbose:
        for r in rows:
            if r["rc"] == 0 and (not r["ok"] or r["und"] or r["wrong"]):
                s = r["s"]
                print("%s %s grow=%d p=%d %s kinds=%s n=%d dt=%g spp=%.0f | %s p=%s cause=%s "
                      "method=%s nmodes=%d | %d of %d true modes matched: %s | warn=%s" % (
                          r["file"], "+".join(s["variants"]) or "core", s["growing"],
                          s["n_sensors"], s["format"], ",".join(s["kinds"]), s["n_samples"],
                          s["dt"], s["spp"], r["stab"],
                          "n/a" if r["p"] is None else "%.3f" % r["p"], r["cause"],
                          r["method"], r["nmodes"], len(r["per"]), len(s["fn"]),
                          " ".join("%.4g/%.3f->%.4g/%.3f" % t for t in r["per"]),
                          ",".join(sorted(set(r["warn"])))))


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    sub = ap.add_subparsers(dest="cmd", required=True)
    g = sub.add_parser("gen")
    g.add_argument("dir")
    g.add_argument("--systems", type=int, default=100)
    g.add_argument("--seed", type=int, default=5120512)
    g.add_argument("--six", type=int, default=20)
    r = sub.add_parser("run")
    r.add_argument("dir")
    r.add_argument("--eigenlog", default="build/rel/eigenlog")
    r.add_argument("--jobs", type=int, default=1)
    r.add_argument("--out", default="out", help="output directory under DIR")
    r.add_argument("--only", default="", help="system numbers or file names, comma-separated")
    r.add_argument("--extra", default="", help="further eigenlog assess options")
    sc = sub.add_parser("score")
    sc.add_argument("dir")
    sc.add_argument("--verbose", action="store_true")
    sc.add_argument("--out", default="out", help="output directory under DIR")
    sc.add_argument("--only", default="", help="system numbers or file names, comma-separated")
    a = ap.parse_args()
    {"gen": cmd_gen, "run": cmd_run, "score": cmd_score}[a.cmd](a)


if __name__ == "__main__":
    main()

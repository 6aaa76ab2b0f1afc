#!/usr/bin/env python3
"""Shows: reading eigenlog's JSON from Python (standard library only):
the verdict, the least damped mode with its bounds, and any warnings.

Usage: eigenlog assess LOG.csv --json result.json
       python3 examples/read_json.py result.json     (or - for stdin)
"""
import json
import sys


def fmt(x, spec=".3f"):
    """A number, or n/a for JSON null (a value that does not exist)."""
    return "n/a" if x is None else format(x, spec)


def main(argv):
    if len(argv) != 2:
        print(__doc__.strip(), file=sys.stderr)
        return 1
    if argv[1] == "-":
        result = json.load(sys.stdin)
    else:
        with open(argv[1], encoding="utf-8") as f:
            result = json.load(f)
    verdict = result["verdict"]
    inp = result.get("input") or {}
    print("log:      %s" % (inp.get("file") or ", ".join(inp.get("files") or [])))
    print("verdict:  %s (%s)" % (verdict["stability"], verdict["type"]))
    boot = result.get("resampling") or {}
    n = (boot.get("replicates") or 0) - (boot.get("failed_replicates") or 0)
    if verdict.get("p_stable") is not None and n > 0:
        print("bootstrap support for stable: %d of %d replicates (model error not included)"
              % (round(verdict["p_stable"] * n), n))
    modes = result.get("modes", [])
    if modes:
        m = modes[0]  # least damped first
        b = m.get("bounds") or {}
        f_lo, f_hi = b.get("frequency_hz", [None, None])
        z_lo, z_hi = b.get("damping_ratio", [None, None])
        print("least damped mode: %s Hz [%s, %s], damping ratio %s [%s, %s]"
              % (fmt(m["frequency_hz"]), fmt(f_lo), fmt(f_hi),
                 fmt(m["damping_ratio"]), fmt(z_lo), fmt(z_hi)))
    for w in verdict.get("warnings", []):
        # warnings are strings today; a list of {code, message} objects is
        # planned: accept both.
        print("warning:  %s" % (w["message"] if isinstance(w, dict) else w))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))

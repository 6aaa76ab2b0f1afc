#!/bin/sh
# End-to-end: the honest-verdict rules (docs/method.md, "No verdict from
# nothing" and "Limit-cycle flag") through the command line. A log of
# white noise (Python's seeded Mersenne Twister, Box-Muller normals) gets
# the word `undecided`, cause `no_dynamics`, the type withheld and the
# warning code `no_dynamics` with --method ls (which said STABLE before
# the rule), tls and the default auto; a van der Pol oscillator (van der
# Pol 1926; mu 1.5, fourth-order Runge-Kutta here, 1 % sensor noise) gets
# the `sustained_oscillation` warning in JSON, text and HTML; the demo
# logs get neither. Run by tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
py=/usr/bin/python3
[ -x "$py" ] || py=python3
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}

"$py" - "$tmp" <<'PY'
import math, random, sys
out = sys.argv[1]
rng = random.Random(7)
def normal():
    u1, u2 = 1.0 - rng.random(), rng.random()
    return math.sqrt(-2.0 * math.log(u1)) * math.cos(2.0 * math.pi * u2)
with open(out + "/white.csv", "w") as f:
    f.write("t [s],a,b,c\n")
    for k in range(3000):
        f.write("%.2f,%.6f,%.6f,%.6f\n" % (k * 0.01, normal(), 5 + normal(), normal()))
def deriv(x, v, mu):
    return v, mu * (1 - x * x) * v - x
mu, dt, sub = 1.5, 0.05, 10
h = dt / sub
x, v = 2.0, 0.0
with open(out + "/vdp.csv", "w") as f:
    f.write("t [s],x,v\n")
    for k in range(-2000, 6000):
        for _ in range(sub):
            k1 = deriv(x, v, mu)
            k2 = deriv(x + h / 2 * k1[0], v + h / 2 * k1[1], mu)
            k3 = deriv(x + h / 2 * k2[0], v + h / 2 * k2[1], mu)
            k4 = deriv(x + h * k3[0], v + h * k3[1], mu)
            x += h / 6 * (k1[0] + 2 * k2[0] + 2 * k3[0] + k4[0])
            v += h / 6 * (k1[1] + 2 * k2[1] + 2 * k3[1] + k4[1])
        if k >= 0:
            f.write("%.2f,%.6f,%.6f\n" % (k * dt, x + 0.02 * normal(), v + 0.02 * normal()))
PY
check "the logs are generated" $?

for m in ls tls auto; do
    "$bin" assess "$tmp/white.csv" --method $m --boot 200 --json "$tmp/white_$m.json" \
        >"$tmp/white_$m.txt" 2>"$tmp/white_$m.err"
    check "white noise, --method $m: exit 0" $?
    grep -q '"stability": "undecided"' "$tmp/white_$m.json" &&
        grep -q '"cause": "no_dynamics"' "$tmp/white_$m.json" &&
        grep -q '"type": "not given (no dynamics)"' "$tmp/white_$m.json"
    check "white noise, --method $m: undecided, cause no_dynamics, no type" $?
    grep -q '"code": "no_dynamics"' "$tmp/white_$m.json"
    check "white noise, --method $m: warning code no_dynamics" $?
    grep -q 'UNDECIDED' "$tmp/white_$m.txt" && grep -q 'reason *no dynamics' "$tmp/white_$m.txt"
    check "white noise, --method $m: text says UNDECIDED with the reason" $?
done
! grep -q 'STABLE' "$tmp/white_ls.txt"
check "white noise, --method ls: no STABLE anywhere" $?

"$bin" assess "$tmp/vdp.csv" --boot 200 --json "$tmp/vdp.json" --html "$tmp/vdp.html" \
    >"$tmp/vdp.txt" 2>&1
check "van der Pol: exit 0" $?
grep -q '"code": "sustained_oscillation"' "$tmp/vdp.json"
check "van der Pol: JSON warning code sustained_oscillation" $?
grep -q 'possible sustained nonlinear oscillation' "$tmp/vdp.txt"
check "van der Pol: the text report warns" $?
grep -q 'possible sustained nonlinear oscillation: a linear verdict does not describe it' \
    "$tmp/vdp.html"
check "van der Pol: the HTML report warns" $?
! grep -q '"cause": "no_dynamics"' "$tmp/vdp.json"
check "van der Pol: has dynamics" $?

for f in datasets/*.csv; do
    "$bin" assess "$f" --boot 200 --json "$tmp/demo.json" --quiet >/dev/null 2>&1
    ! grep -q '"code": "sustained_oscillation"\|"code": "no_dynamics"' "$tmp/demo.json"
    check "$f: neither sustained_oscillation nor no_dynamics" $?
done

echo "e2e_honest: $passed passed, $failed failed"
[ "$failed" -eq 0 ]

#!/bin/sh
# End-to-end: every subcommand's JSON validates against its JSON Schema in
# docs/schema/ (the envelope of docs/json.md plus the subcommand's body),
# checked with Debian's python3-jsonschema (draft 2020-12, the validator
# outside the project): scan, assess (several estimators, --input, a
# 1-state log, --boot 0 without bounds), track, spectrum, and survey's JSON
# lines (one log's assess JSON and one survey_error line). Every warning
# carries a documented code, never "other" on the demo logs. Negative
# checks: mutated documents fail, so the validation itself can fail.
# Run by tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
py=/usr/bin/python3
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}
if ! "$py" -c 'import jsonschema' 2>/dev/null; then
    echo "FAIL e2e_schema: python3-jsonschema is not installed (make deps)"
    exit 1
fi
valid() { # valid COMMAND FILE [--lines]
    "$py" tests/validate_json.py docs/schema "$@"
}
for s in docs/schema/*.schema.json; do
    "$py" -c 'import json,sys,jsonschema; jsonschema.Draft202012Validator.check_schema(json.load(open(sys.argv[1])))' "$s"
    check "$s is a valid draft 2020-12 schema" $?
done

# ---- scan
for log in rig_test booster_pump fan_warmup; do
    "$bin" scan "datasets/$log.csv" --json "$tmp/scan_$log.json" >/dev/null &&
        valid scan "$tmp/scan_$log.json"
    check "scan --json of $log validates" $?
done
# A log assess refuses (time goes back): scan still describes it.
printf 't [s],x [V]\n0,1\n1,2\n0.5,3\n2,4\n3,5\n4,6\n' >"$tmp/back.csv"
"$bin" scan "$tmp/back.csv" --json "$tmp/scan_back.json" >/dev/null && valid scan "$tmp/scan_back.json" &&
    jq -e '.assess_would.usable == false and (.assess_would.refusal | test("time goes backwards"))' \
        "$tmp/scan_back.json" >/dev/null
check "scan --json of a refused log validates and gives the refusal" $?
"$bin" scan datasets/rig_test.csv --json - >"$tmp/scan_stdout.json" && valid scan "$tmp/scan_stdout.json"
check "scan --json - writes only the JSON to standard output" $?
"$bin" scan datasets/rig_test.csv --json datasets/rig_test.csv >/dev/null 2>&1
[ $? -eq 1 ]
check "scan --json onto its input is a usage error" $?

# ---- assess
i=0
while read -r log opts; do
    i=$((i + 1))
    # shellcheck disable=SC2086
    "$bin" assess "datasets/$log.csv" $opts --json "$tmp/assess_$i.json" --quiet &&
        valid assess "$tmp/assess_$i.json"
    check "assess $log $opts validates" $?
done <<'CASES'
booster_pump --boot 100
rig_test --method ls --boot 50
fan_warmup --method fb --boot 50
rig_test --method ssi --lags 1 --boot 50
rig_test --input accel_a --boot 50
booster_pump --channels flow --boot 50
fan_warmup --boot 0
fan_warmup --boot 100
CASES
# Real series with a step and a trend in the level (tests/data/README.md):
# their warnings must carry codes too (checked with the others below).
for real in nile_1871_1970 co2_mauna_loa_1959_1997; do
    "$bin" assess "tests/data/$real.csv" --boot 100 --json "$tmp/assess_$real.json" --quiet &&
        valid assess "$tmp/assess_$real.json"
    check "assess $real validates" $?
done
# The plain-state check's object (docs/cli.md), filled on a log where it
# withdraws iv's "unstable" (tests/data/README.md: iv's 15-sample state).
"$bin" assess tests/data/calib_sink_2000_52.csv --method iv --horizon 1.5 --boot 200 \
    --json "$tmp/assess_sink.json" --quiet &&
    valid assess "$tmp/assess_sink.json" &&
    jq -e '.model.method_choice.plain_state_check.withdrew_unstable == true and
           .verdict.stability == "undecided"' "$tmp/assess_sink.json" >/dev/null
check "assess with the plain-state check validates; the check withdrew 'unstable'" $?
grep -q '"bounds_computed": false' "$tmp/assess_7.json" && grep -q '"p_stable": null' "$tmp/assess_7.json"
check "assess --boot 0: no bounds, p_stable null, still valid" $?
grep -q '"channels": \[' "$tmp/assess_6.json" && [ "$(grep -c '"lambda": {' "$tmp/assess_6.json")" -eq 1 ]
check "1-state log: one mode" $?

# ---- track, spectrum
"$bin" track datasets/fan_warmup.csv --boot 100 --json "$tmp/track.json" --quiet &&
    valid track "$tmp/track.json"
check "track --json validates" $?
"$bin" track datasets/fan_warmup.csv --boot 0 --json "$tmp/track0.json" --quiet &&
    valid track "$tmp/track0.json"
check "track --boot 0 --json (bounds off) validates" $?
"$bin" spectrum datasets/rig_test.csv --json "$tmp/spectrum.json" --quiet &&
    valid spectrum "$tmp/spectrum.json"
check "spectrum --json validates" $?

# ---- survey's JSON lines: one good log, one that cannot be read
mkdir -p "$tmp/logs"
cp datasets/booster_pump.csv "$tmp/logs/a.csv"
printf 't,x\n0,1\n' >"$tmp/logs/b.csv"
"$bin" survey "$tmp/logs" --out "$tmp/sv" --boot 50 --jobs 1 --quiet >/dev/null 2>&1
valid assess "$tmp/sv/survey.jsonl" --lines
check "survey.jsonl lines validate (assess schema, survey_error shape)" $?
grep -q '"survey_error"' "$tmp/sv/survey.jsonl"
check "survey.jsonl holds the broken log's survey_error line" $?

# ---- every warning has a documented code, none falls through to "other"
cat "$tmp"/*.json "$tmp/sv/survey.jsonl" | grep -o '"code": *"[a-z_0-9]*"' | sed 's/.*"\([a-z_0-9]*\)"$/\1/' |
    sort -u >"$tmp/codes.txt"
[ -s "$tmp/codes.txt" ] && ! grep -qx other "$tmp/codes.txt"
check "every demo warning has a specific code ($(tr '\n' ' ' <"$tmp/codes.txt"))" $?
missing=""
for c in $(cat "$tmp/codes.txt"); do
    grep -q "^| \`$c\`" docs/json.md || missing="$missing $c"
done
[ -z "$missing" ]
check "every code seen is documented in docs/json.md (missing:$missing)" $?

# ---- negative checks: the validation can fail
mutate() { # mutate IN OUT PYTHON-STATEMENT-ON-d
    "$py" -c "import json,sys; d=json.load(open(sys.argv[1])); $3; json.dump(d, open(sys.argv[2], 'w'))" "$1" "$2"
}
mutate "$tmp/assess_1.json" "$tmp/bad1.json" 'd["verdict"]["stability"] = "fine"'
! valid assess "$tmp/bad1.json" 2>/dev/null
check "an unknown verdict word fails validation" $?
mutate "$tmp/assess_1.json" "$tmp/bad2.json" 'd["warnings"] = ["a bare string"]'
! valid assess "$tmp/bad2.json" 2>/dev/null
check "warnings as strings fail the assess schema" $?
mutate "$tmp/track.json" "$tmp/bad3.json" 'del d["tool"]'
! valid track "$tmp/bad3.json" 2>/dev/null
check "a document without the envelope's tool fails" $?
mutate "$tmp/spectrum.json" "$tmp/bad4.json" 'd["input"]["files"] = "x.csv"'
! valid spectrum "$tmp/bad4.json" 2>/dev/null
check "input.files not a list fails" $?
mutate "$tmp/scan_rig_test.json" "$tmp/bad5.json" 'd["warning_details"] = [{"code": "x"}]'
! valid scan "$tmp/bad5.json" 2>/dev/null
check "a warning without its message fails" $?

# ---- stabilisation across orders and scaled shapes (added keys)
"$py" - "$tmp/assess_1.json" <<'PY'
import json, sys
d = json.load(open(sys.argv[1]))
s = d["model"]["subspace"]
assert d["model"]["method"] == "hankel"
orders = [o["order"] for o in s["poles_by_order"]]
assert orders == list(range(1, s["max_order"] + 1)), orders
kept = [p for o in s["poles_by_order"] if o["order"] == s["order"] for p in o["poles"] if p["in_model"]]
assert len(kept) == len(d["modes"]) and all(p["persistent"] for p in kept), kept
assert all(len(m["shape_scaled"]) == len(m["shape"]) for m in d["modes"])
PY
check "assess booster_pump: poles_by_order covers orders 1..max_order, kept poles = modes" $?
mutate "$tmp/assess_1.json" "$tmp/bad6.json" 'del d["model"]["subspace"]["poles_by_order"]'
! valid assess "$tmp/bad6.json" 2>/dev/null
check "a hankel model without poles_by_order fails" $?
mutate "$tmp/assess_1.json" "$tmp/bad7.json" 'd["modes"][0]["shape_scaled"][0]["participation"] = 1.5'
! valid assess "$tmp/bad7.json" 2>/dev/null
check "a participation above 1 fails" $?

# ---- whiteness (added object) and the least-squares stand-in
"$py" - "$tmp" <<'PY'
import random, sys
rng = random.Random(5)
with open(sys.argv[1] + "/white.csv", "w") as f:
    f.write("t,a,b\n")
    for k in range(1500):
        f.write("%d,%.6f,%.6f\n" % (k, rng.gauss(0, 1), rng.gauss(0, 1)))
PY
"$bin" assess "$tmp/white.csv" --method iv --boot 100 --json "$tmp/white_iv.json" --quiet &&
    valid assess "$tmp/white_iv.json" &&
    jq -e '.whiteness.decision == "no_dynamics" and (.whiteness.channels | length) == 2 and
           .model.method_choice.stand_in.refused == "iv"' "$tmp/white_iv.json" >/dev/null
check "assess --method iv on white noise validates, with whiteness and the stand-in" $?
jq -e '.whiteness.decision == "dynamics" and .model.method_choice.stand_in == null and
       .model.method_choice.requested == "auto"' "$tmp/assess_1.json" >/dev/null
check "assess booster_pump: whiteness decision dynamics, no stand-in" $?
mutate "$tmp/white_iv.json" "$tmp/bad8.json" 'd["whiteness"]["channels"][0]["p"] = 1.5'
! valid assess "$tmp/bad8.json" 2>/dev/null
check "a whiteness p-value above 1 fails" $?
mutate "$tmp/assess_1.json" "$tmp/bad9.json" 'del d["whiteness"]'
! valid assess "$tmp/bad9.json" 2>/dev/null
check "an assess document without whiteness fails" $?
mutate "$tmp/white_iv.json" "$tmp/bad10.json" 'd["model"]["method_choice"]["stand_in"]["cause"] = "x"'
! valid assess "$tmp/bad10.json" 2>/dev/null
check "a stand-in with an unknown cause fails" $?

echo "e2e_schema: $passed passed, $failed failed"
[ "$failed" -eq 0 ]

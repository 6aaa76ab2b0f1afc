#!/bin/sh
# End-to-end: the byte-for-byte checks hold whatever BLAS kernel OpenBLAS
# picks. OpenBLAS chooses its kernels by CPU at run time; the environment
# variable OPENBLAS_CORETYPE forces one, so one machine can play the CPUs of
# others. Under each kernel the CPU can run: every demo log regenerates to
# the committed bytes (eigenlog demo and test_demo), and the HTML reports
# of assess and track are the same bytes on a second run. A kernel the CPU
# cannot run is skipped with a printed line. Run by tests/run.sh with
# EIGENLOG set to the program under test; its test programs are looked for
# beside it (build/<flavour>/tests/).
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
test_demo=$(dirname "$bin")/tests/test_demo
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}

flags=" $(grep -m1 '^flags' /proc/cpuinfo 2>/dev/null | cut -d: -f2) "
has_flag() { case "$flags" in *" $1 "*) return 0 ;; esac; return 1; }
# The instruction set each kernel needs (OpenBLAS driver/others/dynamic.c).
needs() {
    case $1 in
        Prescott) echo pni ;;   # SSE3 is "pni" in /proc/cpuinfo
        Nehalem) echo sse4_2 ;;
        Sandybridge) echo avx ;;
        Haswell | Zen) echo avx2 ;;
        SkylakeX) echo avx512f ;;
    esac
}

kernels_run=0
for core in Prescott Nehalem Sandybridge Haswell SkylakeX Zen; do
    need=$(needs "$core")
    if ! has_flag "$need"; then
        echo "e2e_repro: skip $core: this CPU lacks $need"
        continue
    fi
    # OpenBLAS reports the kernel it loaded ("Core: X") at OPENBLAS_VERBOSE=2
    # (twice: main.c executes the program again with OPENBLAS_NUM_THREADS).
    got=$(OPENBLAS_VERBOSE=2 OPENBLAS_CORETYPE=$core "$bin" --version 2>&1 |
        sed -n 's/^Core: //p' | head -n 1)
    if [ "$got" != "$core" ]; then
        echo "e2e_repro: skip $core: OpenBLAS loaded '${got:-no kernel report}' instead"
        continue
    fi
    kernels_run=$((kernels_run + 1))
    export OPENBLAS_CORETYPE=$core
    out=$tmp/$core
    mkdir -p "$out"
    "$bin" demo -o "$out" >/dev/null
    check "$core: demo exits 0" $?
    for f in booster_pump rig_test fan_warmup; do
        cmp -s "$out/$f.csv" "datasets/$f.csv"
        check "$core: $f.csv regenerates byte for byte" $?
    done
    if [ -x "$test_demo" ]; then
        "$test_demo" >"$tmp/test_demo.txt" 2>&1
        check "$core: test_demo passes (committed datasets equal the generator)" $?
    else
        echo "e2e_repro: $test_demo not built; its run under $core skipped"
    fi
    for run in 1 2; do
        "$bin" assess datasets/booster_pump.csv --boot 200 --quiet --html "$out/report$run.html" \
            >/dev/null 2>&1
        "$bin" track datasets/fan_warmup.csv --to 1200 --window 300 --boot 100 --quiet \
            --html "$out/track$run.html" >/dev/null 2>&1
    done
    cmp -s "$out/report1.html" "$out/report2.html" && [ -s "$out/report1.html" ]
    check "$core: assess --html same bytes on a second run" $?
    cmp -s "$out/track1.html" "$out/track2.html" && [ -s "$out/track1.html" ]
    check "$core: track --html same bytes on a second run" $?
    unset OPENBLAS_CORETYPE
done
# The sweep proves nothing if no kernel could be forced (an OpenBLAS built
# for one CPU only, or another BLAS).
[ "$kernels_run" -ge 2 ]
check "at least two kernels were swept (got $kernels_run)" $?

echo "e2e_repro: $passed passed, $failed failed"
[ "$failed" -eq 0 ]

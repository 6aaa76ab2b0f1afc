#!/bin/sh
# End-to-end: `eigenlog survey --slurm` through a real single-node Slurm
# cluster on localhost (Debian's slurm-wlm and munge, installed by make
# deps). The test starts its own munged, slurmctld and slurmd with a
# private slurm.conf (own ports, state, spool, pid and log files, munge key
# and socket, all under a temporary folder), submits a survey of the demo
# logs and a broken log (a job array of shards and a dependent merge job),
# waits for it (bounded), and compares the merged table byte for byte with
# a local run of the same options and seed. Every daemon it started is
# stopped by its PID on every way out (trap). Starting the daemons needs
# root: as another user the test says so and skips; if root cannot start
# them the test fails. Run by tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
case $bin in /*) ;; *) bin=$(pwd)/$bin ;; esac
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}
finish() {
    echo "e2e_slurm: $passed passed, $failed failed"
    [ "$failed" -eq 0 ]
    exit
}
if [ "$(id -u)" -ne 0 ]; then
    echo "SKIP e2e_slurm: starting munged, slurmctld and slurmd needs root (this is uid $(id -u));"
    echo "     run the tests as root (CI does) to exercise eigenlog survey --slurm"
    finish
fi
for prog in munged slurmctld slurmd sbatch squeue sinfo scancel; do
    if ! command -v "$prog" >/dev/null 2>&1; then
        failed=$((failed + 1))
        echo "FAIL $prog is not installed: this test needs Debian's slurm-wlm and munge (run: make deps)"
        finish
    fi
done

tmp=$(mktemp -d /tmp/e2e_slurm.XXXXXX)
chmod 755 "$tmp"
daemon_pids=""
jobs_submitted=""
stop_all() {
    # Jobs first (their steps belong to our slurmd), then the daemons by PID.
    [ -n "$jobs_submitted" ] && scancel $jobs_submitted >/dev/null 2>&1
    for p in $daemon_pids; do kill "$p" 2>/dev/null; done
    i=0
    while [ $i -lt 20 ]; do
        alive=""
        for p in $daemon_pids; do kill -0 "$p" 2>/dev/null && alive="$alive $p"; done
        [ -z "$alive" ] && break
        sleep 0.25
        i=$((i + 1))
    done
    for p in $daemon_pids; do kill -9 "$p" 2>/dev/null; done
    rm -rf "$tmp"
}
trap 'stop_all' EXIT
trap 'exit 130' INT
trap 'exit 143' TERM

# ---- munge with its own key, socket, pid, seed and log files
mkdir -p "$tmp/munge" "$tmp/state" "$tmp/spool" "$tmp/log"
chmod 700 "$tmp/munge"
dd if=/dev/urandom of="$tmp/munge/munge.key" bs=1024 count=1 2>/dev/null
chmod 400 "$tmp/munge/munge.key"
munged --force --socket="$tmp/munge/socket" --key-file="$tmp/munge/munge.key" \
    --pid-file="$tmp/munge/munged.pid" --seed-file="$tmp/munge/seed" \
    --log-file="$tmp/log/munged.log"
status=$?
sleep 0.5
[ -s "$tmp/munge/munged.pid" ] && daemon_pids="$daemon_pids $(cat "$tmp/munge/munged.pid")"
[ "$status" -eq 0 ] && [ -n "$daemon_pids" ]
check "munged starts with a private key and socket" $?

# ---- slurm.conf: this node's real CPUs and memory, private everything
cpus=$(slurmd -C | sed -n 's/.*CPUs=\([0-9]*\).*/\1/p' | head -n 1)
mem=$(slurmd -C | sed -n 's/.*RealMemory=\([0-9]*\).*/\1/p' | head -n 1)
port=$((20000 + ($$ % 5000) * 2))
cat >"$tmp/slurm.conf" <<EOF
ClusterName=eigenlogtest
SlurmctldHost=localhost
SlurmUser=root
SlurmctldPort=$port
SlurmdPort=$((port + 1))
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$tmp/munge/socket
StateSaveLocation=$tmp/state
SlurmdSpoolDir=$tmp/spool
SlurmctldPidFile=$tmp/slurmctld.pid
SlurmdPidFile=$tmp/slurmd.pid
SlurmctldLogFile=$tmp/log/slurmctld.log
SlurmdLogFile=$tmp/log/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SchedulerType=sched/builtin
MpiDefault=none
ReturnToService=2
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
NodeName=localhost CPUs=${cpus:-1} RealMemory=${mem:-1000} State=UNKNOWN
PartitionName=test Nodes=localhost Default=YES MaxTime=INFINITE State=UP
EOF
export SLURM_CONF="$tmp/slurm.conf"

slurmctld -f "$tmp/slurm.conf"
status=$?
i=0
while [ ! -s "$tmp/slurmctld.pid" ] && [ $i -lt 40 ]; do sleep 0.25; i=$((i + 1)); done
[ -s "$tmp/slurmctld.pid" ] && daemon_pids="$daemon_pids $(cat "$tmp/slurmctld.pid")"
slurmd -f "$tmp/slurm.conf" -N localhost
status2=$?
i=0
while [ ! -s "$tmp/slurmd.pid" ] && [ $i -lt 40 ]; do sleep 0.25; i=$((i + 1)); done
[ -s "$tmp/slurmd.pid" ] && daemon_pids="$daemon_pids $(cat "$tmp/slurmd.pid")"
[ "$status" -eq 0 ] && [ "$status2" -eq 0 ] && [ -s "$tmp/slurmctld.pid" ] && [ -s "$tmp/slurmd.pid" ]
check "slurmctld and slurmd start with the private slurm.conf" $?
state=""
i=0
while [ $i -lt 60 ]; do
    state=$(sinfo -h -o %T 2>/dev/null | head -n 1)
    [ "$state" = idle ] && break
    sleep 0.5
    i=$((i + 1))
done
[ "$state" = idle ]
check "the node is up (sinfo: ${state:-no answer})" $?
if [ "$failed" -gt 0 ]; then
    for f in "$tmp"/log/*.log; do echo "--- $f"; tail -n 15 "$f"; done
    finish
fi

# ---- the logs: the demo logs, two cuts, a gzip copy and a broken log
logs=$tmp/logs
mkdir -p "$logs/more"
cp datasets/booster_pump.csv datasets/rig_test.csv datasets/fan_warmup.csv "$logs/"
head -n 4000 datasets/booster_pump.csv >"$logs/more/pump_start.csv"
head -n 3000 datasets/rig_test.csv >"$logs/more/rig_start.csv"
gzip -c datasets/fan_warmup.csv >"$logs/more/fan_packed.csv.gz"
printf 'time,a,b\n0,1,2\n1,x,3\n' >"$logs/more/broken.csv"
opts="--boot 100 --seed 3"

"$bin" survey "$logs" --out "$tmp/local" $opts --quiet
status=$?
[ "$status" -eq 2 ]
check "local survey: exit 2 for the broken log (got $status)" $?

start=$(date +%s)
"$bin" survey "$logs" --out "$tmp/cluster" $opts --slurm --shards 3 --partition test \
    --time-limit 5 --sbatch-arg=--cpus-per-task=1 >"$tmp/submit.txt" 2>&1
status=$?
cat "$tmp/submit.txt"
[ "$status" -eq 0 ]
check "survey --slurm submits (exit $status)" $?
jobs_submitted=$(sed -n 's/.*job array \([0-9]*\).*merge job \([0-9]*\).*/\1 \2/p' "$tmp/submit.txt")
[ -n "$jobs_submitted" ]
check "submission names the array job and the merge job" $?
[ -s "$tmp/cluster/slurm/array.sh" ] && [ -s "$tmp/cluster/slurm/merge.sh" ]
check "the job scripts are kept in DIR/slurm" $?
grep -q -- '--jobs "${SLURM_CPUS_PER_TASK:-1}" --threads 1' "$tmp/cluster/slurm/array.sh"
check "a task runs one single-threaded assess per CPU Slurm gave it" $?

# Bounded wait: both jobs leave the queue and the merged table appears.
waited=0
while [ $waited -lt 180 ]; do
    left=$(squeue -h -j "$(echo $jobs_submitted | tr ' ' ',')" 2>/dev/null | wc -l)
    [ "$left" -eq 0 ] && [ -s "$tmp/cluster/survey.csv" ] && break
    sleep 1
    waited=$((waited + 1))
done
echo "e2e_slurm: the cluster took $(( $(date +%s) - start )) s"
[ $waited -lt 180 ]
check "the jobs finished within 180 s" $?
for k in 1 2 3; do
    [ -s "$tmp/cluster/shards/$k/survey.csv" ] || { echo "--- shard $k:"; cat "$tmp/cluster/slurm/shard-$k.out" 2>/dev/null; }
done
[ -s "$tmp/cluster/shards/1/survey.csv" ] && [ -s "$tmp/cluster/shards/2/survey.csv" ] && [ -s "$tmp/cluster/shards/3/survey.csv" ]
check "each of the 3 array tasks wrote its shard" $?
cmp "$tmp/local/survey.csv" "$tmp/cluster/survey.csv"
check "merged survey.csv byte for byte the local run's" $?
if command -v jq >/dev/null 2>&1; then
    jq -cS 'del(.resampling.threads)' "$tmp/local/survey.jsonl" >"$tmp/l.jsonl"
    jq -cS 'del(.resampling.threads)' "$tmp/cluster/survey.jsonl" >"$tmp/c.jsonl"
    cmp -s "$tmp/l.jsonl" "$tmp/c.jsonl"
    check "merged survey.jsonl the local run's (threads aside)" $?
else
    check "jq is installed (make deps) to compare the JSON lines" 1
fi
grep -q ',error,2,' "$tmp/cluster/survey.csv"
check "the broken log is an error row in the merged table" $?
[ -s "$tmp/cluster/index.html" ] && grep -q "Logs that could not be assessed (1)" "$tmp/cluster/index.html"
check "the merge job wrote the overview page" $?

finish

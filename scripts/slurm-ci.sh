#!/usr/bin/env bash
# Integration test of the Slurm scale-out (run by .ci/run): a real single-node Slurm on this
# machine, a job array over a small synthetic cohort, the merge job, and a check that the merged
# cohort.csv equals a single-machine `beatfold cohort` run of the same records byte for byte.
#
# Installs Debian's slurm-wlm and munge when missing (needs root and the network), writes a
# one-node slurm.conf for localhost under a temporary folder (no systemd, no cgroups, no
# accounting database), starts munged, slurmctld and slurmd in the background, and stops them
# by process id on exit. Fails loudly when Slurm cannot be installed or started.
#
# Usage: scripts/slurm-ci.sh [BEATFOLD_BINARY]   (default: target/debug/beatfold)
set -euo pipefail
cd "$(dirname "$0")/.."
t_start=$(date +%s)

bin=${1:-target/debug/beatfold}
[ -x "$bin" ] || { echo "slurm-ci: no beatfold binary at $bin (build it first)" >&2; exit 1; }
bin=$(cd "$(dirname "$bin")" && pwd)/$(basename "$bin")

fail() { echo "slurm-ci: FAILED: $*" >&2; exit 1; }

# --- install -----------------------------------------------------------------------------
if ! command -v slurmctld >/dev/null || ! command -v slurmd >/dev/null || ! command -v munged >/dev/null; then
    echo "== installing slurm-wlm and munge (Debian packages)"
    [ "$(id -u)" = 0 ] || fail "slurm-wlm is not installed and this is not root"
    export DEBIAN_FRONTEND=noninteractive
    apt-get install -y --no-install-recommends slurm-wlm munge >/dev/null 2>&1 \
        || { apt-get update >/dev/null && apt-get install -y --no-install-recommends slurm-wlm munge >/dev/null; } \
        || fail "apt-get could not install slurm-wlm and munge"
fi
command -v slurmctld >/dev/null || fail "slurmctld missing after installation"
echo "== $(slurmctld -V)"

# --- configuration ------------------------------------------------------------------------
T=$(mktemp -d /tmp/beatfold-slurm-ci.XXXXXX)
chmod 755 "$T"
pids=()
cleanup() {
    local rc=$?
    for p in "${pids[@]}"; do
        kill "$p" 2>/dev/null || true
    done
    for p in "${pids[@]}"; do
        wait "$p" 2>/dev/null || true
    done
    if [ "$rc" != 0 ]; then
        for f in "$T"/log/*.log; do
            [ -f "$f" ] && { echo "--- $f (tail)"; tail -n 20 "$f"; }
        done
    fi
    rm -rf "$T"
}
trap cleanup EXIT
trap 'exit 130' INT TERM

mkdir -p "$T/munge" "$T/log" "$T/state" "$T/spool" "$T/etc" "$T/in" "$T/run"
# munged's socket folder must be world-executable; its key readable only by its user.
chmod 755 "$T/munge"
key=$T/etc/munge.key
head -c 1024 /dev/urandom >"$key"
chmod 400 "$key"
sock=$T/munge/munge.socket.2

cpus=$(nproc)
mem_mb=$(awk '/MemTotal/ {printf "%d", $2 / 1024 * 0.9}' /proc/meminfo)
port=$((20000 + RANDOM % 20000))
host=$(hostname -s)
export SLURM_CONF=$T/etc/slurm.conf
cat >"$SLURM_CONF" <<CONF
ClusterName=beatfoldci
SlurmctldHost=$host(127.0.0.1)
SlurmUser=root
SlurmdUser=root
SlurmctldPort=$port
SlurmdPort=$((port + 1))
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$sock
StateSaveLocation=$T/state
SlurmdSpoolDir=$T/spool
SlurmctldPidFile=$T/run/slurmctld.pid
SlurmdPidFile=$T/run/slurmd.pid
SlurmctldLogFile=$T/log/slurmctld.log
SlurmdLogFile=$T/log/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SchedulerParameters=batch_sched_delay=0
MailProg=/bin/true
ReturnToService=2
MinJobAge=600
NodeName=localhost NodeAddr=127.0.0.1 CPUs=$cpus RealMemory=$mem_mb State=UNKNOWN
PartitionName=ci Nodes=localhost Default=YES MaxTime=INFINITE State=UP
CONF

# --- daemons ------------------------------------------------------------------------------
echo "== starting munged, slurmctld, slurmd"
munged -F --force --socket="$sock" --key-file="$key" --pid-file="$T/run/munged.pid" \
    --log-file="$T/log/munged.log" --seed-file="$T/run/munged.seed" >>"$T/log/munged.out" 2>&1 &
pids+=($!)
for _ in $(seq 100); do [ -S "$sock" ] && break; sleep 0.1; done
[ -S "$sock" ] || fail "munged did not create its socket"
slurmctld -D -i -f "$SLURM_CONF" >>"$T/log/slurmctld.out" 2>&1 &
pids+=($!)
slurmd -D -N localhost -f "$SLURM_CONF" >>"$T/log/slurmd.out" 2>&1 &
pids+=($!)
t0=$(date +%s%N)
state=
for _ in $(seq 300); do
    state=$(sinfo -h -N -n localhost -o %t 2>/dev/null || true)
    [ "$state" = idle ] && break
    for p in "${pids[@]}"; do kill -0 "$p" 2>/dev/null || fail "a Slurm daemon (pid $p) exited"; done
    sleep 0.1
done
[ "$state" = idle ] || fail "node not idle after 30 s (state '$state')"
echo "   node idle after $((($(date +%s%N) - t0) / 1000000)) ms"

# --- cohort -------------------------------------------------------------------------------
echo "== synthetic cohort of 4 one-minute records, single-machine run"
for k in 1 2 3 4; do
    "$bin" synth --out "$T/in/rec$k.csv" --minutes 1 --seed "$k" --quiet
done
"$bin" cohort "$T/in" --out "$T/single" --jobs 2 --quiet

echo "== job array of 3 shards and the merge job"
shards=3
read -r array merge < <(BEATFOLD=$bin scripts/slurm/submit.sh "$T/in" "$T/sharded" "$shards")
echo "   array job $array, merge job $merge (afterok:$array)"
job_state() { scontrol -o show job "$1" 2>/dev/null | grep -o 'JobState=[A-Z_]*' | head -n 1 | cut -d= -f2; }
for _ in $(seq 1200); do
    st=$(job_state "$merge")
    case "$st" in
        COMPLETED) break ;;
        FAILED | CANCELLED | TIMEOUT | NODE_FAIL | OUT_OF_MEMORY | BOOT_FAIL | DEADLINE)
            cat "$T"/sharded/slurm-*.out 2>/dev/null || true
            fail "merge job $merge ended in state $st" ;;
    esac
    sleep 0.25
done
[ "$(job_state "$merge")" = COMPLETED ] || fail "merge job $merge not completed after 300 s"
for i in $(seq 0 $((shards - 1))); do
    st=$(job_state "${array}_$i")
    [ "$st" = COMPLETED ] || fail "array task ${array}_$i in state '$st'"
done

echo "== merged table against the single-machine table"
cmp "$T/single/cohort.csv" "$T/sharded/cohort.csv" || fail "merged cohort.csv differs from the single run"
cmp "$T/single/cohort.h5" "$T/sharded/cohort.h5" || fail "merged cohort.h5 differs from the single run"
rows=$(($(wc -l <"$T/sharded/cohort.csv") - 1))
ok=$(grep -c ',ok,' "$T/sharded/cohort.csv" || true)
[ "$rows" = 4 ] && [ "$ok" = 4 ] || fail "expected 4 ok rows, table has $rows rows, $ok ok"
test -s "$T/sharded/cohort_embedding.png" || fail "no shared-embedding figure"
echo "slurm-ci: passed in $(($(date +%s) - t_start)) s (4 records, $shards shards, tables identical)"

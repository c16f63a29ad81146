#!/usr/bin/env bash
# Submit a beatfold cohort to Slurm: a job array of N shards, then a merge job that runs only
# when every shard succeeded (--dependency=afterok). Prints the two job ids, array first.
#
# Usage: scripts/slurm/submit.sh INPUT OUT N [sbatch options for both jobs...]
#   INPUT  folder of recordings or manifest CSV
#   OUT    output folder on a file system every node sees
#   N      number of shards (array tasks), 1 to 100000
# Example: scripts/slurm/submit.sh /data/db /scratch/db-out 16 --partition=short --time=02:00:00
# Environment: BEATFOLD (binary, default `beatfold` on PATH), COHORT_ARGS (extra options for
# `beatfold cohort`), ARRAY_CPUS (threads per shard, default 1), MERGE_CPUS (default 2).
set -euo pipefail

if [ "$#" -lt 3 ]; then
    sed -n '2,13p' "$0" >&2
    exit 2
fi
input=$1 out=$2 n=$3
shift 3
case "$n" in
    '' | *[!0-9]*) echo "submit.sh: N must be a whole number of shards, got '$n'" >&2; exit 2 ;;
esac
if [ "$n" -lt 1 ]; then
    echo "submit.sh: N must be at least 1" >&2
    exit 2
fi
here=$(cd "$(dirname "$0")" && pwd)
# Absolute paths: the jobs may start in another working folder.
abs() { case "$1" in /*) echo "$1" ;; *) echo "$PWD/$1" ;; esac; }
mkdir -p "$out"
export COHORT_INPUT COHORT_OUT COHORT_SHARDS
COHORT_INPUT=$(abs "$input")
COHORT_OUT=$(cd "$out" && pwd)
COHORT_SHARDS=$n
if [ -n "${BEATFOLD:-}" ] && [ "${BEATFOLD#/}" = "$BEATFOLD" ] && [ -x "$BEATFOLD" ]; then
    BEATFOLD=$(abs "$BEATFOLD")
fi
export BEATFOLD="${BEATFOLD:-beatfold}"
export COHORT_ARGS="${COHORT_ARGS:-}"

array=$(sbatch --parsable --array="0-$((n - 1))" --cpus-per-task="${ARRAY_CPUS:-1}" \
    --output="$COHORT_OUT/slurm-shard-%A_%a.out" "$@" "$here/cohort-array.sbatch")
array=${array%%;*}
merge=$(sbatch --parsable --dependency="afterok:$array" --kill-on-invalid-dep=yes \
    --cpus-per-task="${MERGE_CPUS:-2}" --output="$COHORT_OUT/slurm-merge-%j.out" "$@" \
    "$here/cohort-merge.sbatch")
merge=${merge%%;*}
echo "$array $merge"

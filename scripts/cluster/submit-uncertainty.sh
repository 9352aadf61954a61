#!/usr/bin/env bash
# Submits a polystokes Monte Carlo run to Slurm: a job array of K shards, then the merge as a dependent job.
# Usage: submit-uncertainty.sh -k K -d SHARD_DIR -o OUTPUT [-j OUT.json] -- UNCERTAINTY_ARGUMENTS...
# Prints the two job ids ("array JOBID" and "merge JOBID"). Extra sbatch options (partition, time limit,
# account) go in SBATCH_* environment variables, which sbatch reads itself. docs/cluster.md has the details.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
count="" shard_dir="" output="" json=()
while (($#)); do
  case "$1" in
    -k) count="$2"; shift 2 ;;
    -d) shard_dir="$2"; shift 2 ;;
    -o) output="$2"; shift 2 ;;
    -j) json=(--json "$2"); shift 2 ;;
    --) shift; break ;;
    *) echo "submit-uncertainty.sh: unknown argument '$1' (usage: -k K -d SHARD_DIR -o OUTPUT [-j OUT.json] -- ARGS...)" >&2; exit 1 ;;
  esac
done
if [[ ! "$count" =~ ^[1-9][0-9]*$ || -z "$shard_dir" || -z "$output" || $# -eq 0 ]]; then
  echo "submit-uncertainty.sh: need -k K (a whole number >= 1), -d SHARD_DIR, -o OUTPUT and uncertainty arguments after --" >&2
  exit 1
fi
mkdir -p "$shard_dir"
array_id=$(sbatch --parsable --array="1-${count}" "$here/uncertainty-shard.sbatch" "$shard_dir" "$@")
array_id="${array_id%%;*}"
merge_id=$(sbatch --parsable --dependency="afterok:${array_id}" --kill-on-invalid-dep=yes \
  "$here/uncertainty-merge.sbatch" "$shard_dir" "$count" "$output" "${json[@]}")
merge_id="${merge_id%%;*}"
echo "array ${array_id}"
echo "merge ${merge_id}"

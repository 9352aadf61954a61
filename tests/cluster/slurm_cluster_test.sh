#!/usr/bin/env bash
# Cluster test of the recipes in docs/cluster.md: a single-node Slurm cluster on this machine runs a Monte Carlo
# job array of four shards and the dependent merge, and GNU parallel runs the same shards on "several hosts"
# (here the local one); each merged set must equal, byte for byte apart from its creation time, the set of one
# process with the same seed, and its covariance companion that process's companion.
# Installs Slurm, munge and GNU parallel from Debian and starts daemons, so it runs only when CI=true or
# POLYSTOKES_CLUSTER_TEST=1; otherwise it says so and counts as skipped (exit 77).
# Usage: slurm_cluster_test.sh POLYSTOKES_EXECUTABLE SOURCE_DIR
set -euo pipefail
polystokes="$(realpath "$1")"
source_dir="$(realpath "$2")"

if [[ "${CI:-}" != "true" && "${POLYSTOKES_CLUSTER_TEST:-}" != "1" ]]; then
  echo "slurm cluster test: not run (it installs Slurm and starts daemons; set POLYSTOKES_CLUSTER_TEST=1 or CI=true)"
  exit 77
fi

missing=()
for package in slurm-wlm munge parallel; do
  dpkg-query -W -f='${Status}' "$package" 2>/dev/null | grep -q "install ok installed" || missing+=("$package")
done
if ((${#missing[@]})); then
  echo "slurm cluster test: installing ${missing[*]}"
  sudo_cmd=()
  [[ $(id -u) -ne 0 ]] && sudo_cmd=(sudo)
  "${sudo_cmd[@]}" apt-get update -q >/dev/null
  DEBIAN_FRONTEND=noninteractive "${sudo_cmd[@]}" apt-get install -y -q --no-install-recommends "${missing[@]}" >/dev/null
fi

work="$(mktemp -d /tmp/polystokes-slurm.XXXXXX)"
chmod 700 "$work"
pids=()
stop_daemons() {
  local status=$?
  for pid in "${pids[@]}"; do kill "$pid" 2>/dev/null || true; done
  for pid in "${pids[@]}"; do
    for _ in $(seq 50); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
    kill -9 "$pid" 2>/dev/null || true
  done
  if ((status != 0)); then
    for log in "$work"/*.log "$work"/jobs/*.log; do [[ -f "$log" ]] && { echo "--- $log"; tail -n 20 "$log"; }; done
  fi
  rm -rf "$work"
  exit "$status"
}
trap stop_daemons EXIT
trap 'exit 130' INT TERM

user="$(id -un)"
node="$(hostname -s)"
# Ports out of Slurm's default range, chosen per run so that two runs on one machine do not meet.
base_port=$((20000 + ($$ % 20000)))

# munge: a fresh key and socket in the temporary folder.
mkdir -p "$work/munge"
chmod 700 "$work/munge"
dd if=/dev/urandom of="$work/munge/munge.key" bs=1 count=1024 status=none
chmod 400 "$work/munge/munge.key"
munged --force --foreground --key-file="$work/munge/munge.key" --socket="$work/munge/socket" \
  --pid-file="$work/munge/munged.pid" --seed-file="$work/munge/seed" --log-file="$work/munged.log" \
  >>"$work/munged.log" 2>&1 &
pids+=($!)

mkdir -p "$work/state" "$work/spool" "$work/jobs"
cat >"$work/slurm.conf" <<CONF
ClusterName=polystokestest
SlurmctldHost=${node}(127.0.0.1)
SlurmctldPort=${base_port}
SlurmdPort=$((base_port + 1))
SlurmUser=${user}
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=${work}/munge/socket
StateSaveLocation=${work}/state
SlurmdSpoolDir=${work}/spool
SlurmctldPidFile=${work}/slurmctld.pid
SlurmdPidFile=${work}/slurmd.pid
SlurmctldLogFile=${work}/slurmctld.log
SlurmdLogFile=${work}/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
MpiDefault=none
SwitchType=switch/none
SchedulerType=sched/builtin
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
ReturnToService=2
MailProg=/bin/true
PlugStackConfig=${work}/plugstack.conf
NodeName=${node} NodeAddr=127.0.0.1 CPUs=$(nproc) State=UNKNOWN
PartitionName=test Nodes=${node} Default=YES MaxTime=INFINITE State=UP
CONF
: >"$work/plugstack.conf"
export SLURM_CONF="$work/slurm.conf"

for _ in $(seq 50); do [[ -S "$work/munge/socket" ]] && break; sleep 0.1; done
slurmctld -D -i -f "$SLURM_CONF" >>"$work/slurmctld.log" 2>&1 &
pids+=($!)
slurmd -D -f "$SLURM_CONF" >>"$work/slurmd.log" 2>&1 &
pids+=($!)

ready=""
for _ in $(seq 60); do
  if sinfo -h -o %t 2>/dev/null | grep -qE '^(idle|mix|alloc)'; then ready=1; break; fi
  sleep 1
done
[[ -n "$ready" ]] || { echo "slurm cluster test: the single-node cluster did not come up within 60 s"; exit 1; }

# The run: a small demo body, enough samples that every shard has several.
run=(uncertainty "$source_dir/shapes-demo/brennow.obj" --unit km --density 2400 --degree 6 --samples 24 --seed 11
     --shape-sigma 0.01 --correlation-length 0.3 --density-sigma 0.03)
cd "$work/jobs"
ids=$(POLYSTOKES="$polystokes" "$source_dir/scripts/cluster/submit-uncertainty.sh" -k 4 -d "$work/jobs/shards" \
        -o "$work/jobs/merged.txt" -- "${run[@]:1}")
echo "$ids"
merge_id=$(awk '/^merge/ {print $2}' <<<"$ids")
for _ in $(seq 150); do
  squeue -h -j "$merge_id" 2>/dev/null | grep -q . || break
  sleep 1
done
[[ -f "$work/jobs/merged.txt" ]] || { echo "slurm cluster test: the merge job wrote no set"; exit 1; }

# The GNU parallel recipe of docs/cluster.md with the local machine (":") as the only host.
mkdir -p "$work/parallel/shards"
cd "$work/parallel"
seq 1 4 | parallel --will-cite -S : --jobs 2 --workdir . \
  "'$polystokes' -q ${run[*]} --shard {}/4 -o shards/part{}.shard"
"$polystokes" -q uncertainty-merge shards/part*.shard -o merged.txt

# The single run under the merged sets' file name, so the covariance companions have one name too (the set
# records its companion's name and SHA-256).
mkdir -p "$work/single"
"$polystokes" -q "${run[@]}" -o "$work/single/merged.txt"
same_set() {
  if ! cmp -s <(grep -v '^created' "$work/single/merged.txt") <(grep -v '^created' "$1/merged.txt"); then
    echo "slurm cluster test: the set merged from $2 differs from the single-process set"
    diff <(grep -v '^created' "$work/single/merged.txt") <(grep -v '^created' "$1/merged.txt") | head -n 10
    exit 1
  fi
  if ! cmp -s "$work/single/merged.cov.txt" "$1/merged.cov.txt"; then
    echo "slurm cluster test: the covariance merged from $2 differs from the single-process covariance"
    exit 1
  fi
}
same_set "$work/jobs" "the Slurm job array"
same_set "$work/parallel" "GNU parallel"
echo "slurm cluster test: 4 shards as a Slurm job array with a dependent merge, and 4 shards through GNU parallel,"
echo "  each give the single-process set and covariance exactly"

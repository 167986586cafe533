#!/usr/bin/env bash
# Run the demo experiment as a Slurm job array on a single-node cluster
# started here, merge the shards in a dependent job, and check the merged
# folder is byte-identical to a single-process run (all but the manifest's
# run section). Installs Slurm from Debian's packages when missing and stops
# every daemon it started.
set -euo pipefail
cd "$(dirname "$0")/.."
ROOT=$(pwd)
BIN="$ROOT/target/release/outturn"
SHARDS=${SHARDS:-3}
[ -x "$BIN" ] || cargo build --release

if ! command -v slurmctld >/dev/null 2>&1; then
  apt-get update -qq
  DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends \
    slurmctld slurmd slurm-client munge >/dev/null
fi

WORK=$(mktemp -d /tmp/outturn-slurm.XXXXXX)
HOST=$(hostname -s)
CPUS=$(nproc)
PIDS=()
MUNGE_STARTED=0
cleanup() {
  for p in "${PIDS[@]:-}"; do [ -n "$p" ] && kill "$p" 2>/dev/null || true; done
  if [ "$MUNGE_STARTED" = 1 ] && [ -f /run/munge/munged.pid ]; then
    kill "$(cat /run/munge/munged.pid)" 2>/dev/null || true
  fi
  [ -n "${KEEP:-}" ] || rm -rf "$WORK"
}
trap cleanup EXIT

# munge: the package made a key; start the daemon unless one runs.
mkdir -p /run/munge && chown munge:munge /run/munge 2>/dev/null || true
if ! munge -n 2>/dev/null | unmunge >/dev/null 2>&1; then
  runuser -u munge -- /usr/sbin/munged
  MUNGE_STARTED=1
  for _ in $(seq 50); do munge -n | unmunge >/dev/null 2>&1 && break; sleep 0.1; done
fi

mkdir -p /etc/slurm /var/spool/slurmctld /var/spool/slurmd /run/slurm /var/log/slurm
cat > /etc/slurm/slurm.conf <<CONF
ClusterName=outturn-ci
SlurmctldHost=${HOST}(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CryptoType=crypto/munge
MpiDefault=none
MailProg=/bin/true
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
ReturnToService=2
StateSaveLocation=/var/spool/slurmctld
SlurmdSpoolDir=/var/spool/slurmd
SlurmctldPidFile=/run/slurm/slurmctld.pid
SlurmdPidFile=/run/slurm/slurmd.pid
SlurmctldLogFile=/var/log/slurm/slurmctld.log
SlurmdLogFile=/var/log/slurm/slurmd.log
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
NodeName=${HOST} NodeAddr=127.0.0.1 CPUs=${CPUS} State=UNKNOWN
PartitionName=debug Nodes=${HOST} Default=YES MaxTime=INFINITE State=UP
CONF

slurmctld -D -c >"$WORK/slurmctld.out" 2>&1 & PIDS+=($!)
slurmd -D >"$WORK/slurmd.out" 2>&1 & PIDS+=($!)
for _ in $(seq 100); do scontrol ping >/dev/null 2>&1 && break; sleep 0.2; done
for _ in $(seq 100); do [ "$(sinfo -h -N -o %t 2>/dev/null | head -1)" = idle ] && break; sleep 0.2; done
sinfo -h -N -o '%N %t'

EXP="$ROOT/experiments/water_demand.yaml"
# Each array task runs one shard; the merge waits for all of them.
ARRAY=$(sbatch --parsable --array=1-"$SHARDS" --output="$WORK/shard-%a.log" \
  --wrap "$BIN run '$EXP' --shard slurm --no-cache --quiet --out \"$WORK/shard-\$SLURM_ARRAY_TASK_ID\"")
SHARD_DIRS=$(for k in $(seq 1 "$SHARDS"); do printf "%s " "$WORK/shard-$k"; done)
sbatch --wait --dependency=afterok:"$ARRAY" --kill-on-invalid-dep=yes --output="$WORK/merge.log" \
  --wrap "$BIN merge $SHARD_DIRS --out '$WORK/merged'" >/dev/null || {
  echo "slurm: the merge job failed"; tail -n 20 "$WORK"/*.log "$WORK"/*.out; exit 1; }

"$BIN" run "$EXP" --no-cache --quiet --out "$WORK/single"
for f in "$WORK"/single/*; do
  name=$(basename "$f")
  [ "$name" = manifest.json ] && continue
  cmp -s "$f" "$WORK/merged/$name" || { echo "slurm: $name differs from the single run"; exit 1; }
done
python3 - "$WORK/single/manifest.json" "$WORK/merged/manifest.json" <<'PY'
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:3])
a.pop("run"); b.pop("run")
sys.exit(0 if a == b else "slurm: manifest.json differs outside its run section")
PY
echo "slurm: $SHARDS-task job array merged to the same bytes as a single run"

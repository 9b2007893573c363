#!/usr/bin/env bash
# End-to-end test of scans on a real Slurm job array (`npm run test:slurm`, called by .ci/run).
#
# Installs Debian's slurm-wlm and munge when missing (needs root, as CI is), starts munged and a
# single-node controller and node daemon on this machine with a private configuration, writes the
# job-array script with `rungchain slurm`, submits it with `sbatch --wait`, merges the shard
# folders and compares every record with a local run of the same spec. Everything it starts it
# stops again. Prints "slurm-e2e: 1 passed, 0 failed" or fails loudly; it never skips silently.
set -euo pipefail
cd "$(dirname "$0")/../.."
ROOT=$(pwd)
CLI="$ROOT/dist/bin/rungchain.js"

fail() { echo "slurm e2e: FAILED: $*" >&2; echo "slurm-e2e: 0 passed, 1 failed"; exit 1; }

if ! command -v slurmctld >/dev/null || ! command -v munged >/dev/null; then
  [ "$(id -u)" = 0 ] || fail "slurm-wlm and munge are not installed and this is not root (apt-get install slurm-wlm munge)"
  echo "slurm e2e: installing slurm-wlm and munge from Debian's packages"
  apt-get update -qq >/dev/null
  DEBIAN_FRONTEND=noninteractive apt-get install -y -qq slurm-wlm munge >/dev/null
fi
[ "$(id -u)" = 0 ] || fail "the daemons need root to run here"
[ -f "$CLI" ] || fail "$CLI is missing: build first (npm run build)"

WORK=$(mktemp -d /tmp/rungchain-slurm-XXXXXX)
chmod 755 "$WORK"
PIDS=()
cleanup() {
  # munged first by its own pid (killing runuser instead makes it complain), then the rest.
  [ -f "$WORK/munge-key/munged.pid" ] && kill "$(cat "$WORK/munge-key/munged.pid")" 2>/dev/null || true
  for pid in "${PIDS[@]}"; do kill "$pid" 2>/dev/null || true; done
  for pid in "${PIDS[@]}"; do
    for _ in $(seq 50); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
  done
  if [ "${KEEP_SLURM_WORK:-}" = "" ]; then rm -rf "$WORK"; else echo "slurm e2e: left $WORK"; fi
}
trap cleanup EXIT

# --- munge: a private key and socket, so a system munged (if any) is left alone
# (munged wants its key private and its socket's folder open to all)
mkdir -p "$WORK/munge-key" "$WORK/munge"
dd if=/dev/urandom of="$WORK/munge-key/munge.key" bs=1 count=1024 status=none
chown -R munge:munge "$WORK/munge-key" "$WORK/munge"
chmod 700 "$WORK/munge-key"
chmod 400 "$WORK/munge-key/munge.key"
chmod 755 "$WORK/munge"
SOCKET="$WORK/munge/munge.socket"
runuser -u munge -- munged --foreground --key-file="$WORK/munge-key/munge.key" --socket="$SOCKET" \
  --pid-file="$WORK/munge-key/munged.pid" --log-file="$WORK/munge-key/munged.log" --seed-file="$WORK/munge-key/seed" &
PIDS+=($!)
for _ in $(seq 100); do [ -S "$SOCKET" ] && break; sleep 0.1; done
[ -S "$SOCKET" ] || fail "munged did not start: $(cat "$WORK/munge-key/munged.log" 2>/dev/null)"

# --- Slurm: controller and node daemon on this machine, ports chosen free
NODE=$(hostname -s)
CPUS=$(nproc)
MEM=$(( $(awk '/MemTotal/ {print $2}' /proc/meminfo) / 1024 / 2 ))
free_port() { node -e "const s=require('net').createServer().listen(0,'127.0.0.1',()=>{console.log(s.address().port);s.close()})"; }
CTLD_PORT=$(free_port)
SLURMD_PORT=$(free_port)
mkdir -p "$WORK/state" "$WORK/spool"
export SLURM_CONF="$WORK/slurm.conf"
cat > "$SLURM_CONF" <<EOF
ClusterName=rungchain-e2e
SlurmctldHost=$NODE(127.0.0.1)
SlurmctldPort=$CTLD_PORT
SlurmdPort=$SLURMD_PORT
AuthType=auth/munge
AuthInfo=socket=$SOCKET
CredType=cred/munge
SlurmUser=root
SlurmdUser=root
StateSaveLocation=$WORK/state
SlurmdSpoolDir=$WORK/spool
SlurmctldPidFile=$WORK/slurmctld.pid
SlurmdPidFile=$WORK/slurmd.pid
SlurmctldLogFile=$WORK/slurmctld.log
SlurmdLogFile=$WORK/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_Core_Memory
ReturnToService=2
MpiDefault=none
PlugStackConfig=$WORK/plugstack.conf
NodeName=$NODE NodeAddr=127.0.0.1 CPUs=$CPUS RealMemory=$MEM State=UNKNOWN
PartitionName=e2e Nodes=$NODE Default=YES MaxTime=INFINITE State=UP
EOF
: > "$WORK/plugstack.conf"
slurmctld -D -i -f "$SLURM_CONF" > "$WORK/slurmctld.out" 2>&1 &
PIDS+=($!)
slurmd -D -f "$SLURM_CONF" -N "$NODE" > "$WORK/slurmd.out" 2>&1 &
PIDS+=($!)
for _ in $(seq 150); do
  sinfo -h -N -o '%T' 2>/dev/null | grep -qE '^(idle|mixed)' && break
  sleep 0.2
done
sinfo -h -N -o '%T' 2>/dev/null | grep -qE '^(idle|mixed)' ||
  fail "the Slurm node did not come up: $(tail -5 "$WORK/slurmctld.log" "$WORK/slurmd.log" 2>/dev/null)"
echo "slurm e2e: controller and node daemon up on $NODE ($CPUS cores)"

# --- the scan: 12 points of up to 1024 states, in 3 shards
cat > "$WORK/scan.toml" <<'EOF'
[chain]
sites = 5
[levels]
count = 3
tunnelling = 1.0
[exchange]
strength = 1.0
weights = "rotor"
[solve]
states = 2
tolerance = 1e-10
[[scan.axis]]
key = "levels.count"
values = [3, 4]
[[scan.axis]]
key = "exchange.strength"
values = [0.5, 1.0, 1.5, 2.0, 2.5, 3.0]
EOF
RUN="$WORK/run"
node "$CLI" slurm "$WORK/scan.toml" --shards 3 --cpus 1 --partition e2e --run-dir "$RUN" --write "$RUN/scan.sbatch"
sbatch --wait "$RUN/scan.sbatch" || fail "the job array failed: $(cat "$RUN"/slurm-*.out 2>/dev/null | tail -20)"
ls -d "$RUN"/shard-* > /dev/null || fail "no shard folders in $RUN"
[ "$(ls -d "$RUN"/shard-* | wc -l)" = 3 ] || fail "expected 3 shard folders, got: $(ls "$RUN")"
grep -q "shard 2 of 3 (from SLURM_ARRAY_TASK_ID" "$RUN"/slurm-*_2.out || fail "task 2 did not take its shard from the array variables"
node "$CLI" merge "$RUN"/shard-* --out "$RUN/merged" || fail "merge failed"
node "$CLI" scan "$WORK/scan.toml" --out "$WORK/local" --quiet || fail "the local run failed"
node "$CLI" summary "$RUN/merged" --json > "$WORK/merged.json"
node "$CLI" summary "$WORK/local" --json > "$WORK/local.json"
node - "$WORK/merged.json" "$WORK/local.json" <<'EOF' || fail "merged records differ from the local run"
const fs = require('fs');
const [a, b] = process.argv.slice(2).map((f) => JSON.parse(fs.readFileSync(f, 'utf8')));
if (a.length !== 12 || b.length !== 12) throw new Error(`expected 12 points, got ${a.length} and ${b.length}`);
for (let k = 0; k < 12; k++) {
  const x = a[k], y = b[k];
  if (x.index !== y.index || x.status !== 'done' || y.status !== 'done') throw new Error(`point ${k}: ${JSON.stringify([x.status, y.status])}`);
  if (x['exchange.strength'] !== y['exchange.strength'] || x['levels.count'] !== y['levels.count']) throw new Error(`point ${k}: parameters differ`);
  // Warm starts chain differently across shards: agreement to the solver tolerance (1e-10 residuals).
  x.energies.forEach((e, j) => { if (Math.abs(e - y.energies[j]) > 1e-8) throw new Error(`point ${k}: E${j} ${e} vs ${y.energies[j]}`); });
  if (Math.abs(x.string_width - y.string_width) > 1e-6) throw new Error(`point ${k}: string width differs`);
}
console.log('slurm e2e: 12 merged records equal the local run');
EOF
echo "slurm-e2e: 1 passed, 0 failed"

#!/usr/bin/env bash
# A real Slurm run of a sharded study: installs Debian's slurm-wlm and munge if missing, starts
# a one-node cluster on this machine (munged, slurmctld, slurmd, with a slurm.conf written to a
# temporary folder; the node's CPUs and memory from `slurmd -C`), runs the script
# `driftplan cluster slurm` writes for a 4-shard sweep, waits for the array and its merge, and
# compares the merged outputs with a one-machine sweep: the same bytes apart from timing
# fields. Then it removes one shard and submits again: only that shard runs (the others are
# kept), and the merge is the same again.
#
# Usage: scripts/slurm-test.sh [DRIFTPLAN [PLAN]]
#   DRIFTPLAN  the driftplan binary (default: target/debug/driftplan, then `driftplan` on PATH)
#   PLAN       the plan to sweep (default: the demo written by `driftplan demo --data-only`,
#              coarsened to 20 km cells)
# Exit codes: 0 passed, 1 failed, 77 skipped (the cluster could not be installed or started;
# the reason is printed), 124 the time limit (SLURM_TEST_TIMEOUT seconds, default 170) ran out.
# KEEP=1 keeps the temporary folder. Needs root to install packages and run the daemons.
set -euo pipefail

if [ -z "${SLURM_TEST_INNER:-}" ]; then
  export SLURM_TEST_INNER=1
  exec timeout --kill-after=10 "${SLURM_TEST_TIMEOUT:-170}" "$0" "$@"
fi

SKIP=77
say() { echo "slurm-test: $*"; }
skip() { say "SKIPPED: $*"; exit $SKIP; }
fail() { say "FAILED: $*"; exit 1; }

here="$(cd "$(dirname "$0")/.." && pwd)"
DRIFTPLAN="${1:-}"
if [ -z "$DRIFTPLAN" ]; then
  if [ -x "$here/target/debug/driftplan" ]; then DRIFTPLAN="$here/target/debug/driftplan"
  else DRIFTPLAN="$(command -v driftplan || true)"; fi
fi
[ -x "$DRIFTPLAN" ] || fail "no driftplan binary (give its path as the first argument)"
DRIFTPLAN="$(cd "$(dirname "$DRIFTPLAN")" && pwd)/$(basename "$DRIFTPLAN")"

# ---------------------------------------------------------------- install
if ! command -v slurmctld >/dev/null || ! command -v slurmd >/dev/null || ! command -v munged >/dev/null; then
  [ "$(id -u)" = 0 ] || skip "slurm-wlm and munge are not installed and this is not root (apt-get install slurm-wlm munge)"
  command -v apt-get >/dev/null || skip "slurm-wlm and munge are not installed and there is no apt-get"
  say "installing slurm-wlm and munge"
  export DEBIAN_FRONTEND=noninteractive
  if ! apt-get install -y -qq slurm-wlm munge >/dev/null 2>&1; then
    apt-get update -qq >/dev/null 2>&1 || true
    apt-get install -y -qq slurm-wlm munge >/dev/null 2>&1 || skip "apt-get install slurm-wlm munge failed"
  fi
fi
[ "$(id -u)" = 0 ] || skip "the daemons are started as root here (slurmd must run as root); run this script as root"

T="$(mktemp -d /tmp/driftplan-slurm.XXXXXX)"
chmod 755 "$T"
cleanup() {
  # Keeps the script's exit code. Cancels this cluster's jobs (their job steps outlive slurmd
  # otherwise), then stops only the daemons this script started, by their process ids, and
  # waits for them to go before removing their folder.
  local rc=$? p f
  set +e
  if [ -s "$T/slurmctld.pid" ]; then
    jobs_left="$(squeue -h -o %i 2>/dev/null || true)"
    if [ -n "$jobs_left" ]; then
      scancel $jobs_left 2>/dev/null || true
      for _ in $(seq 40); do [ -z "$(squeue -h -o %i 2>/dev/null)" ] && break; sleep 0.25; done
    fi
  fi
  for f in "$T"/slurmd.pid "$T"/slurmctld.pid "$T"/munged.pid; do
    [ -s "$f" ] || continue
    p="$(cat "$f")"
    kill "$p" 2>/dev/null
    for _ in $(seq 40); do kill -0 "$p" 2>/dev/null || break; sleep 0.25; done
  done
  if [ -n "${KEEP:-}" ]; then say "kept $T"; else rm -rf "$T"; fi
  exit "$rc"
}
trap cleanup EXIT
trap 'say "stopped: the time limit (SLURM_TEST_TIMEOUT=${SLURM_TEST_TIMEOUT:-170} s) ran out"; exit 124' TERM INT

# ---------------------------------------------------------------- munge
mkdir -p "$T/munge"
chmod 700 "$T/munge"
dd if=/dev/urandom of="$T/munge/munge.key" bs=1024 count=1 2>/dev/null
chmod 400 "$T/munge/munge.key"
SOCKET="$T/munge/munge.socket"
munged --force --key-file="$T/munge/munge.key" --socket="$SOCKET" \
  --pid-file="$T/munged.pid" --log-file="$T/munge/munged.log" --seed-file="$T/munge/munged.seed" \
  >"$T/munge/start.log" 2>&1 || skip "munged would not start: $(tail -n 3 "$T/munge/start.log" "$T/munge/munged.log" 2>/dev/null | tr '\n' ' ')"
for _ in $(seq 50); do [ -S "$SOCKET" ] && break; sleep 0.1; done
munge --socket="$SOCKET" -n </dev/null | unmunge --socket="$SOCKET" >/dev/null 2>&1 \
  || skip "munge does not round-trip a credential through $SOCKET"

# ---------------------------------------------------------------- slurm.conf
HOST="$(hostname -s)"
mkdir -p "$T/state" "$T/spool"
NODE="$(slurmd -C 2>/dev/null | grep '^NodeName=' | head -n 1)" || true
[ -n "$NODE" ] || skip "slurmd -C printed no node line"
# The node's memory less 512 MiB for the system, so Slurm does not drain it as short of memory.
MEM="$(echo "$NODE" | sed -n 's/.*RealMemory=\([0-9]*\).*/\1/p')"
NODE="$(echo "$NODE" | sed "s/RealMemory=[0-9]*/RealMemory=$((MEM > 1536 ? MEM - 512 : MEM))/")"
# Ports away from the defaults (6817/6818), in case a real Slurm runs here.
PORT_CTL=$((20000 + RANDOM % 20000))
PORT_D=$((PORT_CTL + 1))
export SLURM_CONF="$T/slurm.conf"
cat >"$SLURM_CONF" <<EOF
ClusterName=driftplan-test
SlurmctldHost=$HOST(127.0.0.1)
SlurmctldPort=$PORT_CTL
SlurmdPort=$PORT_D
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$SOCKET
SlurmUser=root
SlurmdUser=root
StateSaveLocation=$T/state
SlurmdSpoolDir=$T/spool
SlurmctldPidFile=$T/slurmctld.pid
SlurmdPidFile=$T/slurmd.pid
SlurmctldLogFile=$T/slurmctld.log
SlurmdLogFile=$T/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_Core_Memory
ReturnToService=2
MpiDefault=none
$NODE NodeAddr=127.0.0.1 State=UNKNOWN
PartitionName=debug Nodes=$HOST Default=YES MaxTime=INFINITE State=UP
EOF

slurmctld -f "$SLURM_CONF" >"$T/slurmctld.start" 2>&1 \
  || skip "slurmctld would not start: $(tail -n 5 "$T/slurmctld.start" "$T/slurmctld.log" 2>/dev/null | tr '\n' ' ')"
slurmd -f "$SLURM_CONF" >"$T/slurmd.start" 2>&1 \
  || skip "slurmd would not start: $(tail -n 5 "$T/slurmd.start" "$T/slurmd.log" 2>/dev/null | tr '\n' ' ')"
state=""
for _ in $(seq 60); do
  state="$(sinfo -h -o %T 2>/dev/null | head -n 1 || true)"
  case "$state" in idle|mixed|allocated) break ;; esac
  sleep 0.5
done
case "$state" in idle|mixed|allocated) ;; *)
  skip "the node did not become idle (state '${state:-none}'): $(tail -n 5 "$T/slurmctld.log" "$T/slurmd.log" 2>/dev/null | tr '\n' ' ')" ;;
esac
say "one-node cluster up: $NODE"

# ---------------------------------------------------------------- the study
cd "$T"
PLAN="${2:-}"
if [ -z "$PLAN" ]; then
  # The demo with 20 km cells and its first three species, solved to a proven optimum (as the
  # tests' coarse demo), so each shard takes seconds.
  "$DRIFTPLAN" demo --quiet --data-only --out "$T/demo" >/dev/null
  awk '
    /^\[/ { if ($0 == "[[species]]") { sp++; if (sp == 1) printf "[budget]\nmax_share = 0.5\n[optimise]\nobjective = \"min-cost\"\n[solver]\ngap = 0.0\n" }
            skip = ($0 == "[optimise]" || $0 == "[budget]" || $0 == "[solver]" || sp > 3) }
    !skip { sub(/^cell_size_km = 5 /, "cell_size_km = 20"); print }
  ' "$T/demo/scenarios/demo.toml" >"$T/demo/scenarios/coarse.toml"
  PLAN="$T/demo/scenarios/coarse.toml"
fi
BUDGETS="4%,8%,...,16%"
# A time limit no solve reaches: the merge equals the one-machine run only while no solve stops
# at its limit (the two runs share it out differently).
LIMIT=3000
"$DRIFTPLAN" sweep "$PLAN" --budgets "$BUDGETS" --time-limit $LIMIT --out "$T/plain" --quiet >"$T/plain.log" 2>&1 \
  || fail "the one-machine sweep failed: $(tail -n 5 "$T/plain.log")"
"$DRIFTPLAN" cluster slurm --shards 4 --partition debug sweep "$PLAN" --budgets "$BUDGETS" --time-limit $LIMIT --out "$T/study" \
  >"$T/cluster.log" 2>&1 || fail "driftplan cluster slurm failed: $(cat "$T/cluster.log")"

# Submits through the generated submit.sh and waits for its jobs to leave the queue.
run_study() {
  local out
  out="$(bash "$T/study/slurm/submit.sh")" || fail "submit.sh failed: $out"
  say "$out"
  # Wait until the queue is empty, leaving 20 s of the time limit for the report and cleanup.
  while [ "$SECONDS" -lt $((${SLURM_TEST_TIMEOUT:-170} - 20)) ]; do
    [ -z "$(squeue -h -o %i 2>/dev/null)" ] && return 0
    if squeue -h -o %r 2>/dev/null | grep -q DependencyNeverSatisfied; then
      fail "a shard failed, so the merge cannot run: $(tail -n 3 "$T"/study/slurm/shard-*.log 2>/dev/null | tr '\n' ' ')"
    fi
    sleep 0.25
  done
  fail "the jobs did not finish within the time limit (SLURM_TEST_TIMEOUT=${SLURM_TEST_TIMEOUT:-170}): $(squeue 2>&1 | tr '\n' ' ')"
}

# The merged outputs must equal the one-machine run's, but for report.html's solve time.
compare() {
  "$DRIFTPLAN" verify "$T/study" >/dev/null || fail "the merged folder does not verify: $(cat "$T/study/slurm/merge.log" 2>/dev/null)"
  local files
  files="$(sed -n 's/^ *"path": "\(.*\)",$/\1/p' "$T/plain/run.json")"
  [ "$files" = "$(sed -n 's/^ *"path": "\(.*\)",$/\1/p' "$T/study/run.json")" ] \
    || fail "the merged run lists other files than the one-machine run"
  local n=0 f
  for f in $files; do
    if [ "$f" = report.html ]; then
      cmp -s <(sed 's|solve time</th><td>[0-9.]* s<|solve time</th><td>… s<|' "$T/plain/$f") \
             <(sed 's|solve time</th><td>[0-9.]* s<|solve time</th><td>… s<|' "$T/study/$f") \
        || fail "report.html differs beyond its solve time"
    else
      cmp -s "$T/plain/$f" "$T/study/$f" || fail "$f differs between the one-machine and the merged run"
    fi
    n=$((n + 1))
  done
  say "merged outputs equal the one-machine run's ($n files; report.html apart from its solve time)"
}

run_study
for k in 1 2 3 4; do
  [ -f "$T/study/shards/$k/shard.json" ] || fail "shard $k did not run: $(cat "$T/study/slurm/shard-$k.log" 2>/dev/null)"
done
compare

# Resumable: remove shard 3 and submit again; only shard 3 runs.
rm -rf "$T/study/shards/3" "$T/study/slurm/"*.log
run_study
for k in 1 2 4; do
  grep -q "complete already: kept" "$T/study/slurm/shard-$k.log" || fail "shard $k ran again: $(cat "$T/study/slurm/shard-$k.log")"
done
grep -q "complete already" "$T/study/slurm/shard-3.log" && fail "shard 3 was not run again"
compare
say "PASSED: a 4-shard sweep ran as a Slurm job array, merged after it, equal to the one-machine run; a re-submission ran only the missing shard"

#!/usr/bin/env bash
# scripts/slurm-tune on a real single-host Slurm cluster: this test writes a
# slurm.conf for this host, starts munged, slurmctld and slurmd (as root, all
# state in a temporary directory), submits the sharded tune of the demo suite
# as an array job of 3 tasks plus the dependent gather job, waits, and checks
# that the gathered table holds every layer exactly once and validates
# against docs/table.schema.json (python3-jsonschema).  The daemons it
# started are stopped by their process ids.  If they cannot start here
# (not root, Slurm or munge not installed, no node comes up), it exits 77
# with the reason: skipped, never passed.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
skip() { echo "SKIP: $*"; exit 77; }
fail() { echo "FAIL: $*"; exit 1; }
[ "$(id -u)" = 0 ] || skip "not root (slurmd must run as root)"
for b in munged slurmctld slurmd sbatch squeue sinfo; do
  command -v "$b" >/dev/null || skip "$b not installed (apt-get install slurm-wlm munge)"
done
$PY -c 'import jsonschema' 2>/dev/null || fail "python3-jsonschema is not installed"

tmp="$(mktemp -d /tmp/cp_slurm.XXXXXX)"
chmod 755 "$tmp"
pids=()
cleanup() {
  for p in "${pids[@]}"; do kill "$p" 2>/dev/null || true; done
  for p in "${pids[@]}"; do wait "$p" 2>/dev/null || true; done
  rm -rf "$tmp"
}
trap cleanup EXIT

# munge: its own key, socket and files, in the foreground (its pid is $!).
mkdir -m 700 "$tmp/munge"
dd if=/dev/urandom of="$tmp/munge/key" bs=1024 count=1 status=none
chmod 400 "$tmp/munge/key"
sock="$tmp/munge/sock"
munged --foreground --force --key-file="$tmp/munge/key" --socket="$sock" \
  --pid-file="$tmp/munge/pid" --log-file="$tmp/munge/log" --seed-file="$tmp/munge/seed" \
  >"$tmp/munge/out" 2>&1 &
pids+=($!)

# Free ports for slurmctld and slurmd (two consecutive, above 20000).
port=$((20000 + RANDOM % 20000))
node="$(hostname -s)"
nodeline="$(slurmd -C | head -1)"
mkdir -p "$tmp/state" "$tmp/spool"
cat > "$tmp/slurm.conf" <<C
ClusterName=cptest
SlurmctldHost=$node
SlurmctldPort=$port
SlurmdPort=$((port + 1))
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$sock
StateSaveLocation=$tmp/state
SlurmdSpoolDir=$tmp/spool/%n
SlurmctldPidFile=$tmp/slurmctld.pid
SlurmdPidFile=$tmp/slurmd.pid
SlurmctldLogFile=$tmp/slurmctld.log
SlurmdLogFile=$tmp/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
MpiDefault=none
SwitchType=switch/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
ReturnToService=2
SlurmdTimeout=60
$nodeline State=UNKNOWN
PartitionName=cptune Nodes=$node Default=YES MaxTime=INFINITE State=UP
C
export SLURM_CONF="$tmp/slurm.conf"

for i in $(seq 50); do [ -S "$sock" ] && break; sleep 0.1; done
[ -S "$sock" ] || skip "munged did not start: $(tail -3 "$tmp/munge/log" "$tmp/munge/out" 2>/dev/null | tr '\n' ' ')"
slurmctld -D -i -f "$SLURM_CONF" >"$tmp/slurmctld.out" 2>&1 &
pids+=($!)
slurmd -D -f "$SLURM_CONF" >"$tmp/slurmd.out" 2>&1 &
pids+=($!)
up=0
for i in $(seq 60); do
  state="$(sinfo -h -n "$node" -o %T 2>/dev/null || true)"
  case "$state" in idle*|mixed*|allocated*) up=1; break ;; esac
  sleep 0.5
done
[ "$up" = 1 ] || skip "the Slurm node did not come up (state '$state'): $(tail -3 "$tmp/slurmctld.log" "$tmp/slurmd.log" 2>/dev/null | tr '\n' ' ')"

# The sharded tune: 3 tasks, then the gather, on partition cptune.
fast=(--budget 0.05 --max-seconds 0.02 --max-candidates 1 --quiet)
"$SRC/scripts/slurm-tune" --suite demo --shards 3 --out "$tmp/run" --class "local:cptune" \
  --time 00:10:00 --convpick "$CLI" -- "${fast[@]}" > "$tmp/submitted" ||
  fail "slurm-tune failed: $(cat "$tmp/submitted")"
cat "$tmp/submitted"
grep -q '^local array=[0-9]* gather=[0-9]*$' "$tmp/submitted" || fail "unexpected output: $(cat "$tmp/submitted")"
done_=0
for i in $(seq 600); do
  [ -z "$(squeue -h -o %i 2>/dev/null)" ] && { done_=1; break; }
  sleep 0.5
done
[ "$done_" = 1 ] || fail "the jobs did not finish in 300 s: $(squeue 2>&1 | tr '\n' ' ')"
out="$tmp/run/bundle/local.json"
[ -f "$out" ] || fail "no gathered table; logs: $(cat "$tmp"/run/local/*.log 2>/dev/null | tail -5 | tr '\n' ' ')"
for i in 1 2 3; do [ -f "$tmp/run/local/shard-$i.json" ] || fail "shard $i missing"; done

# Every layer exactly once: the distinct shapes of the demo suite as one
# unsharded tune lists them (names of the first layer of each shape).
"$CLI" tune --suite demo --shard 1/1 "${fast[@]}" --out "$tmp/all.json"
$PY - "$out" "$tmp/all.json" "$tmp"/run/local/shard-*.json <<'PY' || fail "the gathered table does not hold every layer once"
import json, sys
g = [e["name"] for e in json.load(open(sys.argv[1]))["entries"]]
a = [e["name"] for e in json.load(open(sys.argv[2]))["entries"]]
per = [len(json.load(open(p))["entries"]) for p in sys.argv[3:]]
print("gathered:", sorted(g), "per shard:", per)
assert sorted(g) == sorted(a) and len(set(g)) == len(g), (g, a)
assert sum(per) == len(a) and all(per), per
PY
$PY - "$SRC/docs/table.schema.json" "$out" <<'PY' || fail "the gathered table does not match the schema"
import json, sys, jsonschema
v = jsonschema.Draft202012Validator(json.load(open(sys.argv[1])))
errs = list(v.iter_errors(json.load(open(sys.argv[2]))))
for e in errs[:5]: print(list(e.path), e.message)
sys.exit(1 if errs else 0)
PY
"$CLI" lookup "$tmp/run/bundle" --shape n=1,c=32,h=24,w=24,k=64,r=1,s=1 | grep -q "^table: *local.json: exact" ||
  fail "lookup on the bundle did not pick local.json exactly"
echo "PASS: 3 shards tuned under Slurm, gathered, every layer once, schema valid"

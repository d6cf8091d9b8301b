#!/usr/bin/env bash
# Integration test on a real, single-node Slurm cluster started by hand on this machine: the
# example job array (scripts/slurm/) maps the sample tiles shard by shard, its final job builds the
# mosaic from the tiles' records, and the mosaic must equal a single-machine `habcast batch` run
# bit for bit. Needs root and Debian's slurm-wlm and munge (scripts/install-deps.sh
# --with-cluster-tools). Every daemon it starts is stopped by PID on exit.
#
# Usage: slurm_batch.sh HABCAST_BINARY SOURCE_DIR
# Exit: 0 passed, 1 failed, 77 skipped (Slurm could not be started; ctest counts it as skipped).
set -uo pipefail

SKIP=77
habcast="$(realpath "$1")"
source_dir="$(cd "$2" && pwd)"
manifest="$source_dir/sample-rasters/batch-demo.toml"
shards=3

skip() {
  echo "" >&2
  echo "******************************************************************" >&2
  echo "SKIPPED: the Slurm integration test did not run: $*" >&2
  echo "******************************************************************" >&2
  exit $SKIP
}
fail() {
  echo "FAILED: $*" >&2
  for log in "$work"/*.log "$work"/jobs/*.log; do
    [[ -f "$log" ]] && { echo "--- $log" >&2; tail -n 20 "$log" >&2; }
  done
  exit 1
}

[[ $(id -u) -eq 0 ]] || skip "it must run as root to start slurmctld, slurmd and munged"
for tool in munged slurmctld slurmd sbatch squeue scontrol; do
  command -v "$tool" >/dev/null || skip "$tool is not installed (scripts/install-deps.sh --with-cluster-tools installs slurm-wlm and munge)"
done
[[ -x "$habcast" ]] || fail "no habcast executable at $habcast"
[[ -f "$manifest" ]] || fail "no sample manifest at $manifest (scripts/make_sample_tiles.py writes it)"

work="$(mktemp -d /tmp/habcast-slurm.XXXXXX)"
pids=()
cleanup() {
  # Only the daemons this script started, by the PIDs it recorded.
  for pid in "${pids[@]}"; do kill "$pid" 2>/dev/null; done
  for pid in "${pids[@]}"; do
    for _ in $(seq 50); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
    kill -9 "$pid" 2>/dev/null
    wait "$pid" 2>/dev/null
  done
  rm -rf "$work"
}
trap cleanup EXIT

# --- munge: private key, socket and files, so nothing of a system installation is touched -----
mkdir -p "$work/munge" "$work/state" "$work/spool" "$work/jobs"
chmod 700 "$work/munge"
dd if=/dev/urandom of="$work/munge/munge.key" bs=1024 count=1 status=none
chmod 400 "$work/munge/munge.key"
socket="$work/munge/munge.socket"
munged --foreground --force --key-file="$work/munge/munge.key" --socket="$socket" \
  --pid-file="$work/munge/munged.pid" --log-file="$work/munged.log" --seed-file="$work/munge/munge.seed" \
  >"$work/munged.out" 2>&1 &
pids+=($!)
for _ in $(seq 50); do [[ -S "$socket" ]] && break; sleep 0.1; done
[[ -S "$socket" ]] || skip "munged did not start: $(tail -n 3 "$work/munged.out" "$work/munged.log" 2>/dev/null | tr '\n' ' ')"

# --- slurm.conf: one node on the loopback, no systemd, no cgroups, no accounting ---------------
port=$((20000 + RANDOM % 20000))
cpus=$(nproc)
cat >"$work/slurm.conf" <<CONF
ClusterName=habcasttest
SlurmctldHost=localhost(127.0.0.1)
SlurmctldPort=$port
SlurmdPort=$((port + 1))
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
AuthInfo=socket=$socket
CredType=cred/munge
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
SchedulerType=sched/builtin
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
MpiDefault=none
ReturnToService=2
StateSaveLocation=$work/state
SlurmdSpoolDir=$work/spool
SlurmctldPidFile=$work/slurmctld.pid
SlurmdPidFile=$work/slurmd.pid
SlurmctldLogFile=$work/slurmctld.log
SlurmdLogFile=$work/slurmd.log
SlurmctldTimeout=30
SlurmdTimeout=30
MinJobAge=600
NodeName=localhost NodeAddr=127.0.0.1 CPUs=$cpus State=UNKNOWN
PartitionName=test Nodes=localhost Default=YES MaxTime=10 State=UP
CONF
export SLURM_CONF="$work/slurm.conf"

slurmctld -D -i -f "$SLURM_CONF" >"$work/slurmctld.out" 2>&1 &
pids+=($!)
slurmd -D -N localhost -f "$SLURM_CONF" >"$work/slurmd.out" 2>&1 &
pids+=($!)
ready=0
for _ in $(seq 150); do
  if sinfo -h -o '%T' 2>/dev/null | grep -Eq '^(idle|mixed|allocated)'; then ready=1; break; fi
  for pid in "${pids[@]}"; do kill -0 "$pid" 2>/dev/null || skip "a Slurm daemon exited at start: $(tail -n 3 "$work"/slurm*.out "$work"/slurm*.log 2>/dev/null | tr '\n' ' ')"; done
  sleep 0.2
done
[[ $ready -eq 1 ]] || skip "the Slurm node did not become idle in 30 s: $(sinfo 2>&1 | tr '\n' ' ') $(tail -n 3 "$work/slurmd.log" 2>/dev/null | tr '\n' ' ')"
echo "slurm: controller on 127.0.0.1:$port, node localhost with $cpus CPUs is up"

# --- the same region twice: once on this machine, once through the job array ------------------
"$habcast" batch "$manifest" -o "$work/local" -q
code=$?
[[ $code -eq 6 ]] || fail "single-machine batch exited $code; expected 6 (the sample region has one broken tile)"

ids=$(cd "$work/jobs" && HABCAST="$habcast" OUTPUT="$work/cluster" "$source_dir/scripts/slurm/submit-batch.sh" \
        "$manifest" "$shards" --chdir="$work/jobs" --cpus-per-task=1) || fail "sbatch failed: $ids"
read -r array_id mosaic_id <<<"$ids"
echo "slurm: submitted tile array $array_id (1-$shards) and mosaic job $mosaic_id"
for _ in $(seq 600); do
  [[ -z "$(squeue -h -j "$array_id,$mosaic_id" 2>/dev/null)" ]] && break
  sleep 0.2
done
[[ -z "$(squeue -h -j "$array_id,$mosaic_id" 2>/dev/null)" ]] || fail "jobs still queued after 120 s: $(squeue 2>&1 | tr '\n' ' ')"
scontrol show job "$array_id" 2>/dev/null | grep -E 'JobId=|JobState=' | tr -s ' \n' ' ' ; echo
mosaic_state=$(scontrol show job "$mosaic_id" 2>/dev/null | grep -o 'ExitCode=[0-9:]*' | head -n 1)
echo "slurm: mosaic job $mosaic_id: $mosaic_state"
[[ "$mosaic_state" == "ExitCode=6:0" ]] || fail "the mosaic job should exit 6 (one broken tile), got '$mosaic_state'"

# Every shard ran: each tile has a record written by one of the array tasks.
records=$(ls "$work"/cluster/tiles/*/tile-record.json 2>/dev/null | wc -l)
[[ $records -eq 9 ]] || fail "expected 9 tile records (8 done, 1 failed) from the array, found $records"

/usr/bin/python3 - "$work/local" "$work/cluster" <<'PY' || fail "the cluster mosaic differs from the single-machine mosaic"
# Compare every layer of the two mosaics pixel by pixel, as raw bytes (GDAL's Python bindings).
import json, sys
from osgeo import gdal
gdal.UseExceptions()
local, cluster = sys.argv[1], sys.argv[2]
for layer in ("suitability", "uncertainty", "extrapolation"):
    a = gdal.Open(f"{local}/{layer}.vrt")
    b = gdal.Open(f"{cluster}/{layer}.vrt")
    assert (a.RasterXSize, a.RasterYSize, a.RasterCount) == (b.RasterXSize, b.RasterYSize, b.RasterCount), layer
    assert a.GetGeoTransform() == b.GetGeoTransform(), layer
    for i in range(1, a.RasterCount + 1):
        if a.GetRasterBand(i).ReadRaster() != b.GetRasterBand(i).ReadRaster():
            sys.exit(f"{layer} band {i} differs")
    print(f"{layer}: {a.RasterXSize} x {a.RasterYSize} x {a.RasterCount} identical")
ra = json.load(open(f"{local}/batch-report.json"))
rb = json.load(open(f"{cluster}/batch-report.json"))
assert ra["status_counts"] == {"done": 8, "failed": 1}, ra["status_counts"]
assert rb["status_counts"] == {"failed": 1, "up_to_date": 8}, rb["status_counts"]
assert ra["total"]["valid_pixels"] == rb["total"]["valid_pixels"]
print("reports agree:", rb["status_counts"])
PY
echo "PASSED: the Slurm job array's mosaic equals the single-machine run bit for bit"

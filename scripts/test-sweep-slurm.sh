#!/usr/bin/env bash
# The sweep through a real Slurm: bring up a one-node cluster (scripts/slurm-one-node.sh), run the
# 4-point sweep of configs/sweep-demo.toml as a job array, wait for it, collect it, run the same
# sweep locally and require every point's metrics.json (and the collected table) to be the same
# bytes. The daemons are stopped on exit, whatever happens. Fails loudly — never skips — when
# Slurm cannot be installed or started.
#
#   scripts/test-sweep-slurm.sh          # needs root (apt-get) the first time
#   SWEEP_SLURM_TIMEOUT_S=900 scripts/test-sweep-slurm.sh
#   KEEP=1 scripts/test-sweep-slurm.sh   # keep the work folder (its path is printed)
#
# The build honours CARGO_TARGET_DIR.
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
timeout_s="${SWEEP_SLURM_TIMEOUT_S:-600}"

fail() {
  echo "test-sweep-slurm: FAILED: $*" >&2
  exit 1
}

cargo build --release -p beamfloor-cli
bin="${CARGO_TARGET_DIR:-$root/target}/release/beamfloor"
[ -x "$bin" ] || fail "no binary at $bin after the build"
started_at="$(date +%s)"

work="$(mktemp -d "${TMPDIR:-/tmp}/beamfloor-sweep-slurm.XXXXXX")"
# munged runs as the munge user and must reach its socket and key below this folder.
chmod 755 "$work"
cluster="$work/cluster"
slurm_sweep="$work/slurm-sweep"
local_sweep="$work/local-sweep"
config="$root/configs/sweep-demo.toml"

cleanup() {
  local status=$?
  if [ -f "$cluster/pids" ]; then
    "$root/scripts/slurm-one-node.sh" stop "$cluster" || echo "test-sweep-slurm: stopping the cluster failed" >&2
  fi
  if [ "$status" -ne 0 ] || [ -n "${KEEP:-}" ]; then
    echo "test-sweep-slurm: work folder kept: $work" >&2
  else
    rm -rf "$work"
  fi
}
trap cleanup EXIT

show_task_logs() {
  local f
  for f in "$slurm_sweep"/slurm/logs/*.log "$slurm_sweep"/point-*/error.txt; do
    [ -f "$f" ] || continue
    echo "---- $f" >&2
    tail -n 20 "$f" >&2
  done
  [ -f "$cluster/log/slurmd.log" ] && { echo "---- slurmd.log" >&2; tail -n 20 "$cluster/log/slurmd.log" >&2; }
  return 0
}

"$root/scripts/slurm-one-node.sh" start "$cluster" || fail "could not bring up the one-node Slurm cluster"
cluster_up="$(date +%s)"
# shellcheck disable=SC1091
source "$cluster/env"
command -v sbatch >/dev/null || fail "sbatch not on PATH after installing slurm-client"

echo "== job array"
"$bin" sweep prepare "$config" "$slurm_sweep"
"$bin" sweep enqueue "$slurm_sweep" || { show_task_logs; fail "submitting the job array failed"; }
if ! "$bin" sweep progress "$slurm_sweep" --wait "$timeout_s" --list; then
  show_task_logs
  squeue >&2 || true
  fail "the job array did not finish within $timeout_s s (SWEEP_SLURM_TIMEOUT_S)"
fi
if ! "$bin" sweep gather "$slurm_sweep" --require-complete; then
  show_task_logs
  fail "points of the job array are missing or failed"
fi
slurm_done="$(date +%s)"
for marker in "$slurm_sweep"/point-*/done.json; do
  grep -q '"how": "slurm job ' "$marker" || fail "$marker was not written by a Slurm task"
done

echo "== the same sweep locally"
"$bin" sweep prepare "$config" "$local_sweep"
"$bin" sweep run-local "$local_sweep" --jobs 2
"$bin" sweep gather "$local_sweep" --require-complete

echo "== compare"
count=0
for point in "$slurm_sweep"/point-*; do
  name="$(basename "$point")"
  for f in config.toml run/metrics.json run/metrics.csv run/sources.csv; do
    cmp "$point/$f" "$local_sweep/$name/$f" || fail "$name/$f differs between Slurm and local runs"
  done
  count=$((count + 1))
done
[ "$count" -eq 4 ] || fail "expected 4 points, found $count"
cmp "$slurm_sweep/collected/metrics.csv" "$local_sweep/collected/metrics.csv" \
  || fail "the collected tables differ"
[ -s "$slurm_sweep/collected/floor.png" ] || fail "no floor plot"
end="$(date +%s)"
echo "test-sweep-slurm: PASS: $count points byte-identical under Slurm and locally" \
  "(cluster start $((cluster_up - started_at)) s, job array $((slurm_done - cluster_up)) s," \
  "local sweep and comparison $((end - slurm_done)) s, total $((end - started_at)) s after the build)"

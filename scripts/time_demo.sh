#!/usr/bin/env bash
# Time one `beamfloor run`: build the release binary, run the built-in demo (or the config given
# as the first argument) into a fresh temporary run folder under `/usr/bin/time -v`, and print
# the wall time, the peak memory (max RSS) and the runner's own per-stage timings from the run
# folder's manifest.json.
#
#   scripts/time_demo.sh                    # the built-in demo
#   scripts/time_demo.sh my.toml            # another config
#   KEEP=1 scripts/time_demo.sh my.toml     # keep the run folder (its path is printed)
#   BEAMFLOOR_BIN=/path/to/beamfloor scripts/time_demo.sh   # time a given binary, no build
#
# The build honours CARGO_TARGET_DIR. `/usr/bin/time` comes from Debian's `time` package; it is
# installed if missing (needs root and apt).
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
config="${1:-}"
if [ -n "$config" ]; then
  config="$(cd "$(dirname "$config")" && pwd)/$(basename "$config")"
fi

if [ ! -x /usr/bin/time ]; then
  echo "installing Debian's time package for /usr/bin/time" >&2
  apt-get install -y --no-install-recommends time >&2 \
    || { apt-get update >&2 && apt-get install -y --no-install-recommends time >&2; }
fi

if [ -z "${BEAMFLOOR_BIN:-}" ]; then
  (cd "$root" && cargo build --release -p beamfloor-cli >&2)
  BEAMFLOOR_BIN="${CARGO_TARGET_DIR:-$root/target}/release/beamfloor"
fi

work="$(mktemp -d "${TMPDIR:-/tmp}/beamfloor-time.XXXXXX")"
if [ -z "${KEEP:-}" ]; then
  trap 'rm -rf "$work"' EXIT
fi
out="$work/run"
args=(run --out "$out")
if [ -n "$config" ]; then
  args=(run "$config" --out "$out")
fi

echo "running: $BEAMFLOOR_BIN ${args[*]}" >&2
status=0
/usr/bin/time -v -o "$work/time.txt" "$BEAMFLOOR_BIN" "${args[@]}" || status=$?

wall="$(sed -n 's/^\s*Elapsed (wall clock) time (h:mm:ss or m:ss): //p' "$work/time.txt")"
rss_kib="$(sed -n 's/^\s*Maximum resident set size (kbytes): //p' "$work/time.txt")"
user="$(sed -n 's/^\s*User time (seconds): //p' "$work/time.txt")"
sys="$(sed -n 's/^\s*System time (seconds): //p' "$work/time.txt")"
echo
echo "== beamfloor run ${config:-(built-in demo)}"
echo "exit status      : $status"
echo "wall time        : $wall (h:mm:ss or m:ss)"
echo "CPU time         : user $user s, system $sys s"
awk -v k="$rss_kib" 'BEGIN { printf "peak memory (RSS): %d KiB = %.2f GiB\n", k, k / 1048576 }'

manifest="$out/manifest.json"
if [ -f "$manifest" ]; then
  echo "per-stage timings (manifest.json):"
  python3 - "$manifest" <<'EOF'
import json, sys
m = json.load(open(sys.argv[1]))
for t in m.get("timings_s", []):
    print(f"  {t['stage']:<40} {t['seconds']:9.2f} s")
if m.get("peak_memory_bytes") is not None:
    print(f"  runner's own peak-memory reading: {m['peak_memory_bytes'] / 2**30:.2f} GiB")
EOF
else
  echo "no manifest.json in $out (the run did not finish)"
fi
if [ -n "${KEEP:-}" ]; then
  echo "run folder: $out"
fi
exit "$status"

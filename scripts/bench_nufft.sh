#!/usr/bin/env bash
# Side-by-side benchmark of our gridder against finufft and ducc0 (see scripts/bench_nufft.py):
# builds the release example crates/imaging/examples/nufft_bench.rs, makes sure the project venv
# (.venv, from scripts/python-env.sh) has the reference packages, and runs the comparison.
# Arguments are passed on (e.g. --quick for 1.5 M points at 1024^2 only, --reps 5).
# Honours CARGO_TARGET_DIR. The full run takes several minutes on two cores.
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
python="$(scripts/python-env.sh | tail -n 1)"
cargo build --release -p beamfloor-imaging --example nufft_bench >&2
binary="${CARGO_TARGET_DIR:-$root/target}/release/examples/nufft_bench"
exec "$python" scripts/bench_nufft.py "$binary" "$@"

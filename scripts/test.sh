#!/usr/bin/env bash
# The whole test suite: Rust unit and integration tests, then the cross-checks against outside
# reference libraries (numpy, scipy, astropy, pyerfa) on values the Rust tests exported.
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
python="$(scripts/python-env.sh | tail -n 1)"
export BEAMFLOOR_CROSSCHECK_DIR="$root/target/crosscheck"
rm -rf "$BEAMFLOOR_CROSSCHECK_DIR"
mkdir -p "$BEAMFLOOR_CROSSCHECK_DIR"
cargo test --workspace --release
"$python" -m pytest -q tests/crosscheck
scripts/test-sweep-slurm.sh   # sweeps as a Slurm job array on a one-node cluster vs the same sweep run locally

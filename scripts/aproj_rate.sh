#!/usr/bin/env bash
# A-projection floating-point rate against the machine's peak, in one run: runs the `aproj`
# criterion benchmark (crates/imaging/benches/aproj.rs: the register-only FMA peak loop on 1 and
# 2 threads, then gridding and degridding at realistic kernel supports) and prints, per case, the
# median time, the rate in GFLOP/s (operations counted by `KernelAProjection::flop_count`) and
# that rate as a percentage of the peak measured on the same number of threads.
#
#   scripts/aproj_rate.sh              # about a minute and a half on two cores (once built)
#
# Honours CARGO_TARGET_DIR (criterion writes its results under it).
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
cargo bench -p beamfloor-imaging --bench aproj >&2
python3 - "${CARGO_TARGET_DIR:-$root/target}/criterion" <<'PY'
import json, os, re, sys

base = sys.argv[1]
rows = []
for group in ("fma_peak", "aproj_kernel"):
    gdir = os.path.join(base, group)
    for name in sorted(os.listdir(gdir)):
        new = os.path.join(gdir, name, "new")
        if not os.path.isfile(os.path.join(new, "benchmark.json")):
            continue
        with open(os.path.join(new, "benchmark.json")) as f:
            meta = json.load(f)
        with open(os.path.join(new, "estimates.json")) as f:
            median_ns = json.load(f)["median"]["point_estimate"]
        flop = meta["throughput"]["Elements"]
        threads = int(re.search(r"threads=(\d+)", meta["function_id"]).group(1))
        rows.append((group, meta["function_id"], threads, median_ns * 1e-9, flop / median_ns))
peak = {t: r for g, _, t, _, r in rows if g == "fma_peak"}
print(f"{'case':<52} {'median':>10} {'GFLOP/s':>9} {'of peak':>8}")
for group, case, threads, t, rate in rows:
    share = f"{100 * rate / peak[threads]:7.1f}%" if threads in peak else "      -"
    label = f"{group}/{case}"
    print(f"{label:<52} {t * 1e3:8.2f} ms {rate:9.1f} {share}")
print("(peak: the register-only FMA loop on as many threads; medians of criterion's samples)")
PY

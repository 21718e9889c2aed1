#!/usr/bin/env bash
# Rerun the fuzz targets, one after the other.
#
#   fuzz/run.sh [SECONDS] [TARGET...]
#
# SECONDS per target (default 600); TARGET is load_bytes and/or
# check_hostile (default both). Needs cargo-fuzz
# (`cargo install cargo-fuzz --locked`) and a nightly toolchain; without
# nightly it uses the stable compiler with RUSTC_BOOTSTRAP=1.
# The working corpus grows in fuzz/corpus/TARGET (not committed); it starts
# from the committed seeds in fuzz/seeds/TARGET. Crashes land in
# fuzz/artifacts/TARGET; turn each into a replay file under
# tests/fuzz-regressions/ (see fuzz/README.md).
set -euo pipefail
cd "$(dirname "$0")/.."
secs="${1:-600}"
shift || true
targets=("$@")
if [ ${#targets[@]} -eq 0 ]; then
    targets=(load_bytes check_hostile)
fi
if rustup run nightly rustc --version >/dev/null 2>&1; then
    fuzz=(cargo +nightly fuzz)
else
    export RUSTC_BOOTSTRAP=1
    fuzz=(cargo fuzz)
fi
for t in "${targets[@]}"; do
    mkdir -p "fuzz/corpus/$t"
    # One job: the machine is shared. Per-input time and memory are bounded:
    # an input slower than 10 s or above 4 GB is a finding.
    "${fuzz[@]}" run -O "$t" "fuzz/corpus/$t" "fuzz/seeds/$t" -- \
        -max_total_time="$secs" -timeout=10 -rss_limit_mb=4096 \
        -print_final_stats=1
done

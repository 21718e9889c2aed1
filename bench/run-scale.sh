#!/usr/bin/env bash
# Time `stackup-lint check` at scale: a synthetic repository of demo stackups
# (bench/synth-monorepo.py) cold (empty field-solver cache) and warm, with 1
# and 2 solver threads, and one 24-layer, 40-class file cold on one core.
#
# Usage: bench/run-scale.sh [FILES]   (default 1000)
# Environment: CARGO_TARGET_DIR (default target), RUNS (warm repeats, default 3),
#              WORK (scratch directory, default a new temporary directory).
# Prints wall times (best of RUNS for warm runs, one cold run each since a cold
# run fills the cache) and the machine load before each measurement.
set -euo pipefail
cd "$(dirname "$0")/.."
FILES=${1:-1000}
RUNS=${RUNS:-3}
TARGET=${CARGO_TARGET_DIR:-target}
WORK=${WORK:-$(mktemp -d)}
cargo build --release --quiet
BIN="$TARGET/release/stackup-lint"
python3 bench/synth-monorepo.py "$WORK/repo" --files "$FILES"
python3 bench/synth-monorepo.py "$WORK/single/board.stackup.yaml" --single 24 40
unset STACKUP_LINT_NO_CACHE

# Wall time of one run in seconds (exit code 0 or 1 is a completed check).
timed() {
  local start end code=0
  start=$(date +%s.%N)
  "$@" >/dev/null 2>&1 || code=$?
  end=$(date +%s.%N)
  if [ "$code" -gt 1 ]; then
    echo "run failed with exit code $code: $*" >&2
    exit 1
  fi
  echo "$end - $start" | bc -l | xargs printf '%.3f'
}

best() {
  local b=""
  for _ in $(seq "$RUNS"); do
    t=$(timed "$@")
    if [ -z "$b" ] || [ "$(echo "$t < $b" | bc -l)" = 1 ]; then b=$t; fi
  done
  echo "$b"
}

load() { cut -d' ' -f1-3 /proc/loadavg; }

echo "files: $FILES stackups under $WORK/repo; load average: $(load)"
for threads in 1 2; do
  cache="$WORK/cache-$threads"
  rm -rf "$cache"
  export STACKUP_LINT_CACHE_DIR="$cache"
  echo "threads $threads cold:  $(timed "$BIN" check "$WORK/repo" --threads "$threads") s  (load $(load))"
  echo "threads $threads warm:  $(best "$BIN" check "$WORK/repo" --threads "$threads") s  (best of $RUNS, load $(load))"
done
echo "threads 2 no cache: $(timed "$BIN" check "$WORK/repo" --threads 2 --no-cache) s  (load $(load))"

single="$WORK/single/board.stackup.yaml"
export STACKUP_LINT_CACHE_DIR="$WORK/cache-single"
cold=""
for _ in $(seq "$RUNS"); do
  rm -rf "$WORK/cache-single"
  t=$(timed taskset -c 0 "$BIN" check "$single" --threads 1)
  if [ -z "$cold" ] || [ "$(echo "$t < $cold" | bc -l)" = 1 ]; then cold=$t; fi
done
echo "24 layers, 40 classes, one core, cold: $cold s  (best of $RUNS, load $(load))"
echo "24 layers, 40 classes, one core, warm: $(best taskset -c 0 "$BIN" check "$single" --threads 1) s"

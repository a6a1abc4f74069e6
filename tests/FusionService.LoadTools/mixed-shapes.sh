#!/usr/bin/env bash
# Mixed-vehicle batches beside single-van uploads of the same size (issue 16), in rounds on fresh services:
#   tests/FusionService.LoadTools/mixed-shapes.sh BUILD_DIR [ROUNDS=2] [SECONDS=20]
# BUILD_DIR as for load-pair.sh (svc/ and load/, plus load-pair.sh is taken from this directory). Each round runs five
# shapes one after the other: per-vehicle batches of 500; interleaved batches of 500 vans x 1 message; interleaved
# batches of 500 vans x 10 messages (5,000 a batch); single-van batches of 10; single-van batches of 1. Prints one line
# per run. Set LOCK=/path/to/lockfile to run each under `flock` (when other benchmarks share the machine).
set -u
dir=$1; rounds=${2:-2}; secs=${3:-20}
here=$(cd "$(dirname "$0")" && pwd)
for round in $(seq 1 "$rounds"); do
  for spec in "per-vehicle" "interleaved" "interleaved --batch-size 5000 --vehicle-run 10" \
              "per-vehicle --batch-size 10" "per-vehicle --batch-size 1"; do
    started="$(date -u +%H:%M:%S) load $(cut -d' ' -f1 /proc/loadavg)"
    if [ -n "${LOCK:-}" ]; then
      result=$(flock "$LOCK" bash "$here/load-pair.sh" "$dir" "$secs" $spec 2>&1)
    else
      result=$(bash "$here/load-pair.sh" "$dir" "$secs" $spec 2>&1)
    fi
    echo "round $round, $spec ($started): $(echo "$result" | grep -E '^accepted' | tail -1)"
  done
done

#!/usr/bin/env bash
# sched.sh BUILD_DIR OUT_DIR [heavy-read-http options...]: one run.sh run (its settings from the environment, e.g.
# READ_PROCESS=1 READ_IDLE=1, and --rate 66.7) with `perf sched record -a` over 8 s of each phase and /proc/stat read
# around each recording; then schedsplit.py prints how long ingest's threads and backends waited for a core, the
# largest waits with what ran on the cores meanwhile, and the machine's user, nice (also idle-policy) and idle time.
# docs/limits-and-keys.md, "At a fleet's rate instead of flat out". Needs root and perf.
set -u
here=$(cd "$(dirname "$0")" && pwd)
build=$1; out=$2; shift 2
mkdir -p "$out"
record() { # phase: wait until the tool has started it, skip 6 s, record 8 s
  head -1 /proc/stat > "$out/$1.stat0"
  perf sched record -a -o "$out/$1.data" -- sleep 8 > /dev/null 2>&1
  head -1 /proc/stat > "$out/$1.stat1"
}
( while ! grep -q "|---|" "$out/tool.out" 2>/dev/null; do sleep 0.2; done; sleep 6; record alone
  while ! grep -q "| ingest alone" "$out/tool.out" 2>/dev/null; do sleep 0.2; done; sleep 6; record beside ) &
recorder=$!
"$here/run.sh" "$build" "$out" "$@"
wait $recorder
for phase in alone beside; do perf sched timehist -i "$out/$phase.data" > "$out/$phase.th" 2>/dev/null; done
python3 "$here/schedsplit.py" "$out"

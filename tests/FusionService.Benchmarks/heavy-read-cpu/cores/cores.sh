#!/usr/bin/env bash
# cores.sh: do the two cores slow each other? (docs/limits-and-keys.md, "At a fleet's rate instead of flat out")
# Fixed work pinned to core 0 (integer mixing, or a pointer chase over 1, 4, 8 or 64 MiB) with core 1 idle and with
# core 1 running a SCHED_IDLE copy of a workload; then bursts on core 1 (wake every 2 ms, walk 512 KiB) alone and beside
# an idle-policy or nice-19 memory walker on the same core. Needs gcc, taskset, chrt; run under the quiet lock.
set -u
here=$(cd "$(dirname "$0")" && pwd); bin=$(mktemp -d)
gcc -O2 -o "$bin/work" "$here/work.c" && gcc -O2 -o "$bin/burst" "$here/burst.c" || exit 2
W=$bin/work; B=$bin/burst
declare -A N=([alu]=800000000 [l2]=400000000 [l3s]=100000000 [l3]=60000000 [mem]=20000000)
date -u +%FT%TZ; cat /proc/loadavg
for kind in alu l2 l3s l3 mem; do
  for other in none alu l2 l3 mem; do
    for rep in 1 2; do
      if [ "$other" != none ]; then taskset -c 1 chrt --idle 0 "$W" "$other" 1000000000 forever & sp=$!; sleep 0.5; fi
      r=$(taskset -c 0 "$W" "$kind" "${N[$kind]}")
      if [ "$other" != none ]; then kill "$sp"; wait "$sp" 2>/dev/null; fi
      echo "core 0 $kind beside core 1 $other: $r"
    done
  done
done
for other in none idle nice19; do
  case $other in
    idle) taskset -c 1 chrt --idle 0 "$W" mem 1000000000 forever & sp=$!;;
    nice19) setsid sh -c 'echo 19 > /proc/self/autogroup; exec taskset -c 1 "$0" mem 1000000000 forever' "$W" & sp=$!;;
  esac
  sleep 0.5
  echo "bursts on core 1 beside $other: $(taskset -c 1 "$B" 512 4 2000)"
  if [ "$other" != none ]; then kill "$sp"; wait "$sp" 2>/dev/null; fi
done
rm -rf "$bin"

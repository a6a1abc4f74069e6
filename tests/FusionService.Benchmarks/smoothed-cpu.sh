#!/usr/bin/env bash
# tests/FusionService.Benchmarks/smoothed-cpu.sh [REPEATS] [NAME=VALUE ...]: where a warm smoothed vehicle-day's time
# and processor time go (docs/benchmarks.md, "The smoothed vehicle-day, split"), not a test.
#  Starts the Release service on a free loopback port with a throwaway data directory (NAME=VALUE pairs go into its
#  environment, e.g. Tracks__ReplayStretches=3), posts the invented vehicle-day (vanday-http --repeats 0), then asks
#  REPEATS times (default 8) for GET /v1/vehicles/van-split/track?kind=smoothed over the last 10 hours with curl and
#  prints per request: time to the first byte and to the last (curl), the service's processor time and that of every
#  process of its PostgreSQL cluster (utime + stime from /proc/PID/stat), and the service's processor time per thread
#  name (/proc/PID/task/*/stat; threads that ended during the request, the replay threads, are missing there). The
#  service logs its own split at Debug level (read, replay and processor time per stretch, backward pass); they are
#  printed at the end.
# Needs a Release build (dotnet build FusionService.sln -c Release) and the PostgreSQL 15 server binaries.
set -euo pipefail
cd "$(dirname "$0")/../.."
root=$(pwd)
repeats=${1:-8}
shift || true
dll="$root/src/FusionService/bin/Release/net10.0/FusionService.dll"
bench_dll="$root/tests/FusionService.Benchmarks/bin/Release/net10.0/FusionService.Benchmarks.dll"
[ -f "$dll" ] && [ -f "$bench_dll" ] || { echo "smoothed-cpu: build first (dotnet build FusionService.sln -c Release)" >&2; exit 2; }
work=$(mktemp -d /tmp/fusion-smoothed-cpu.XXXXXX)
chmod 755 "$work"  # the cluster runs as the postgres account, which must reach the data directory
port=$(python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1",0)); print(s.getsockname()[1]); s.close()')
export Database__DataDirectory="$work/pg" Security__RateLimitPermits=10000000 ASPNETCORE_URLS="http://127.0.0.1:$port"
export Serilog__MinimumLevel__Override__FusionService=Debug
for kv in "$@"; do export "${kv?}"; done
dotnet "$dll" >"$work/service.log" 2>&1 &
pid=$!
cleanup() { kill "$pid" 2>/dev/null || true; wait "$pid" 2>/dev/null || true; rm -rf "$work"; }
trap cleanup EXIT
for _ in $(seq 1 120); do curl -sf "http://127.0.0.1:$port/health/ready" >/dev/null 2>&1 && break; sleep 1; done
key() { dotnet "$dll" keys create --fleet smoothed-cpu --role "$1" | grep secret | awk '{print $NF}'; }
ingest=$(key ingest); read_key=$(key read); admin=$(key admin)
dotnet "$bench_dll" vanday-http --url "http://127.0.0.1:$port/" --ingest-key "$ingest" --read-key "$read_key" \
  --metrics-key "$admin" --repeats 0 --vehicle van-split >/dev/null
from=$(date -u -d '-10 hours' +%Y-%m-%dT%H:%M:%SZ); to=$(date -u +%Y-%m-%dT%H:%M:%SZ)
cluster_pids() { local pm; pm=$(head -1 "$work/pg/postmaster.pid"); echo "$pm $(pgrep -P "$pm" | tr '\n' ' ')"; }
# A backend may end between the listing and the reading: it then counts 0.
ticks() { local s=0 p v; for p in "$@"; do v=$(awk '{print $14 + $15}' "/proc/$p/stat" 2>/dev/null) || v=0; s=$((s + ${v:-0})); done; echo "$s"; }
threads() { for t in /proc/"$pid"/task/*/stat; do cat "$t" 2>/dev/null || true; echo; done | python3 -c '
import sys
for line in sys.stdin:
    if ")" not in line: continue
    name = line[line.index("(") + 1:line.rindex(")")]; f = line[line.rindex(")") + 2:].split()
    print(f"{line.split()[0]}\t{name}\t{int(f[11]) + int(f[12])}")' | sort; }
tick_ms=$((1000 / $(getconf CLK_TCK)))
sleep 3
echo "start $(date -u +%FT%TZ), load average $(cut -d' ' -f1-3 /proc/loadavg)"
for r in $(seq 1 "$repeats"); do
  pg=$(cluster_pids)
  s0=$(ticks "$pid"); p0=$(ticks $pg); threads >"$work/t0"
  w=$(curl -s -o /dev/null -w '%{time_starttransfer} %{time_total} %{size_download}' -H "Authorization: Bearer $read_key" \
    "http://127.0.0.1:$port/v1/vehicles/van-split/track?from=$from&to=$to&kind=smoothed")
  s1=$(ticks "$pid"); p1=$(ticks $pg); threads >"$work/t1"
  read -r first total bytes <<<"$w"
  echo "request $r: first byte ${first} s, last byte ${total} s, ${bytes} bytes; processor time: service $(((s1 - s0) * tick_ms)) ms, PostgreSQL $(((p1 - p0) * tick_ms)) ms"
  python3 - "$work/t0" "$work/t1" "$tick_ms" <<'PY'
import collections, sys
def load(path):
    rows = {}
    for line in open(path):
        tid, name, ticks = line.rstrip("\n").split("\t")
        rows[tid] = (name, int(ticks))
    return rows
before, after, tick = load(sys.argv[1]), load(sys.argv[2]), int(sys.argv[3])
per = collections.Counter()
for tid, (name, ticks) in after.items():
    per[name] += (ticks - before.get(tid, (name, 0))[1]) * tick
print("  threads still running (ms): " + ", ".join(f"{n} {v}" for n, v in per.most_common(6) if v > 0))
PY
done
echo "end $(date -u +%FT%TZ), load average $(cut -d' ' -f1-3 /proc/loadavg)"
echo "the service's own split (Debug log):"
grep -E "Smoothing stretch from|Smoothed track of van-split" "$work/service.log" | sed -e 's/^.*\] //' | cut -c1-160 || true

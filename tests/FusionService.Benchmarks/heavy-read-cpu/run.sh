#!/usr/bin/env bash
# run.sh BUILD_DIR OUT_DIR [heavy-read-http options...]
# One heavy-read-http run (docs/limits-and-keys.md, "Measured") on a fresh service with its own throwaway data
# directory and a fresh fleet: BUILD_DIR/svc holds the service's Release output (src/FusionService/bin/Release/net10.0),
# BUILD_DIR/bench the benchmarks' (tests/FusionService.Benchmarks/bin/Release/net10.0). Settings come from the
# environment (e.g. HeavyReads__ReplayCpuCores=0). Beside the tool's table it samples, every 0.5 s, the processor time
# of the service (/proc/PID/stat) and of every postgres process, and prints per phase the service's, the history-read
# backends' (application_name fusion-history-reads) and the other backends' processor seconds, and the runtime's GC
# and thread-pool counters from /metrics. PERF=1 also records `perf record -g -a` for 15 s of the second phase.
# GCTRACE=1 also records the GC events of the service and of the load tool (EventPipe) and prints each one's pauses per
# phase (gcsplit.py: count, total, largest, 99th percentile, time to suspend the threads).
# READ_PROCESS=1 also starts a history-read process (Service:Role=HistoryReads) on 127.0.0.1:5092, attached to the
# service's embedded cluster, in an autogroup of nice READ_NICE (default 19), and sends the readers
# to it (docs/limits-and-keys.md, "A history-read process"); READ_ENV="Key__Name=value ..." sets settings of that
# process only (e.g. READ_ENV="HeavyReads__MaxConcurrent=1 Tracks__ReplayStretches=1"); READ_IDLE=1 starts it under
# the SCHED_IDLE policy as well (chrt --idle 0, sched(7); its threads, not its PostgreSQL backends).
# Listens on 127.0.0.1:5091; needs root (psql as postgres via runuser), curl, python3.
set -u
here=$(cd "$(dirname "$0")" && pwd)
build=$1; out=$2; shift 2
mkdir -p "$out"
data=$(mktemp -d /tmp/heavy-read-pg.XXXX); chmod 755 "$data"
export Database__DataDirectory=$data/pg ASPNETCORE_URLS=http://127.0.0.1:5091
env | grep -E "^(HeavyReads|Database|Tracks|Ingest)__|^DOTNET_(gc|GC)" | grep -v DataDirectory > "$out/env" || true
[ -n "${READ_ENV:-}" ] && echo "reader: $READ_ENV" >> "$out/env"
[ -n "${PERF:-}" ] && export DOTNET_PerfMapEnabled=1
gctrace() { [ -n "${GCTRACE:-}" ] && echo DOTNET_EnableEventPipe=1 DOTNET_EventPipeConfig=Microsoft-Windows-DotNETRuntime:0x1:4 DOTNET_EventPipeOutputPath=$out/$1.nettrace; }
env $(gctrace svc) dotnet "$build/svc/FusionService.dll" > "$out/service.log" 2>&1 &
svc=$!
echo $svc > "$out/svc.pid"
for _ in $(seq 1 120); do curl -sf http://127.0.0.1:5091/health/ready >/dev/null 2>&1 && break; sleep 1; done
key() { dotnet "$build/svc/FusionService.dll" keys create --fleet heavy --role "$1" 2>/dev/null | grep -i secret | awk '{print $NF}'; }
I=$(key ingest); R=$(key read); A=$(key admin)
port=$(sed -n 4p "$data/pg/postmaster.pid")
readurl=()
if [ -n "${READ_PROCESS:-}" ]; then
  env ${READ_ENV:-} Service__Role=HistoryReads ASPNETCORE_URLS=http://127.0.0.1:5092 Orleans__SiloPort=11112 Orleans__GatewayPort=0 \
    setsid sh -c 'echo $1 > /proc/self/autogroup; exec $2 dotnet "$0"' "$build/svc/FusionService.dll" "${READ_NICE:-19}" \
      "${READ_IDLE:+chrt --idle 0}" > "$out/reader.log" 2>&1 &
  reader=$!
  for _ in $(seq 1 120); do curl -sf http://127.0.0.1:5092/health/ready >/dev/null 2>&1 && break; sleep 1; done
  readurl=(--read-url http://127.0.0.1:5092)
fi
python3 $here/cpusample.py $svc "$out/cpu.jsonl" &
sampler=$!
# What the backends wait for, every 0.2 s (one psql session of its own, application_name wait-sampler).
PSQL="runuser -u postgres -- psql -h 127.0.0.1 -p $port -d fusion -X -qAt"
printf '%s\n' "select extract(epoch from clock_timestamp()), application_name, state, coalesce(wait_event_type, 'cpu'), coalesce(wait_event, '-') from pg_stat_activity where backend_type = 'client backend' and pid <> pg_backend_pid() \\watch 0.2" \
  | PGAPPNAME=wait-sampler $PSQL > "$out/waits.txt" 2>/dev/null &
waiter=$!
{ date -u +%FT%TZ; cat /proc/loadavg; } > "$out/start"
( while kill -0 $svc 2>/dev/null; do echo "T $(date +%s.%N)"; curl -s -H "Authorization: Bearer $A" http://127.0.0.1:5091/metrics | grep -E '^dotnet_(gc_collections|gc_pause|thread_pool|monitor|process_cpu)|^fusion_ingest_commit_duration_seconds_(sum|count)|^http_server_request_duration_seconds_(sum|count).*POST.*/v1/telemetry/'; sleep 2; done ) > "$out/rt.txt" 2>/dev/null &
scraper=$!
if [ -n "${PERF:-}" ]; then
  ( while ! grep -q "ingest alone" "$out/tool.out" 2>/dev/null; do sleep 0.2; done; sleep 2
    perf record -F 499 -g -a -o "$out/perf.data" -- sleep 15 > /dev/null 2>&1 ) &
fi
env $(gctrace tool) dotnet "$build/bench/FusionService.Benchmarks.dll" heavy-read-http --url http://127.0.0.1:5091 "${readurl[@]}" --ingest-key "$I" --read-key "$R" --metrics-key "$A" "$@" 2>&1 | python3 $here/stamp.py > "$out/tool.out"
{ date -u +%FT%TZ; cat /proc/loadavg; } > "$out/end"
curl -s -H "Authorization: Bearer $A" http://127.0.0.1:5091/metrics > "$out/metrics.txt"
$PSQL -c "select pid from pg_stat_activity where application_name='fusion-history-reads'" > "$out/readpids"
$PSQL -c "select pid from pg_stat_activity where backend_type='client backend' and application_name not in ('fusion-history-reads', 'wait-sampler')" > "$out/backpids"
[ -n "${READ_PROCESS:-}" ] && { kill $reader; wait $reader 2>/dev/null; }
kill $svc; wait $svc 2>/dev/null
kill $sampler $scraper $waiter 2>/dev/null; wait $sampler $scraper $waiter 2>/dev/null
rm -rf "$data"
echo "== $out $(cat "$out/env" | tr '\n' ' ') start $(tr '\n' ' ' < "$out/start") end $(tr '\n' ' ' < "$out/end")"
cut -d' ' -f2- "$out/tool.out" | grep -E '^\||posted|load tool'
python3 $here/split.py "$out"
if [ -n "${GCTRACE:-}" ]; then
  for p in svc tool; do dotnet "$build/bench/FusionService.Benchmarks.dll" gc-events "$out/$p.nettrace" > "$out/$p.gc.tsv"; done
  python3 $here/gcsplit.py "$out"
fi

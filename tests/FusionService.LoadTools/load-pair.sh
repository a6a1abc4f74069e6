#!/usr/bin/env bash
# One load run against a build of the service, for before/after pairs on a noisy machine:
#   tests/FusionService.LoadTools/load-pair.sh BUILD_DIR SECONDS [per-vehicle|interleaved] [more load options ...]
# (more options go to both load runs, e.g. --batch-size 5000 --vehicle-run 10)
# BUILD_DIR holds svc/ (the service's Release output, e.g. a copy of src/FusionService/bin/Release/net10.0) and load/
# (tests/FusionService.LoadTools/bin/Release/net10.0). Starts the service with a fresh data directory (its own embedded
# PostgreSQL) on port 5091 with the limits lifted, creates keys, warms up for 10 s with other vehicle ids, runs the load
# tool for SECONDS, prints its result and the data directory's size, and stops the service it started (by PID).
# Alternate two builds (A B A B ...) and compare pair by pair.
# With CPU=1 it also prints the processor time spent during the measured run per 1,000 accepted messages, split into the
# service, its PostgreSQL (postmaster, backends and the ones that ended) and the load tool, from /proc's tick counters.
# With STATS=1 it loads pg_stat_statements, resets it after the warm-up and prints the eight statements that took the
# most execution time during the measured run, in ms per 1,000 accepted messages (needs root: psql runs as postgres).
# With STORAGE=1 it waits FOLD_WAIT seconds (default 0; the fold of closed windows, Database:ChunkFoldDelayS and
# Database:ChunkFoldIntervalS, passed in the environment, runs meanwhile), rewrites the measurement chunks and fused
# states compactly (VACUUM FULL: what the stored rows take once the space of deleted row versions is reused) and prints
# the bytes per stored measurement, indexes and TOAST included.
# With PERF=DIR it samples the service's stacks with `perf record -g` (499 Hz) during the measured run and writes
# DIR/perf.data with the JIT's symbol map, and DIR/self.txt and DIR/inclusive.txt (`perf report`, own and inclusive
# shares by symbol).
set -u
tick_ms=$(( 1000 / $(getconf CLK_TCK) ))
# Ticks of a process and of its waited-for children (fields 14-17 of /proc/PID/stat).
ticks_of() { awk '{print $14 + $15 + $16 + $17}' "/proc/$1/stat" 2>/dev/null || echo 0; }
# Ticks of the cluster's postmaster with all its children, live or ended.
postgres_ticks() {
  local pm total=0 child
  pm=$(head -1 "$Database__DataDirectory/postmaster.pid" 2>/dev/null) || { echo 0; return; }
  total=$(ticks_of "$pm")
  for child in $(pgrep -P "$pm"); do total=$(( total + $(awk '{print $14 + $15}' "/proc/$child/stat" 2>/dev/null || echo 0) )); done
  echo "$total"
}
dir=$1; secs=$2; shape=${3:-per-vehicle}
shift $(( $# < 3 ? $# : 3 ))
data=$(mktemp -d /tmp/loadpg.XXXX); chmod 755 "$data"
export Database__DataDirectory=$data/pg
export ASPNETCORE_URLS=http://127.0.0.1:5091
export Security__RateLimitPermits=10000000 Security__FleetRateLimitPermits=10000000
export Security__MessageLimitPermits=2000000000 Security__FleetMessageLimitPermits=2000000000
export Serilog__MinimumLevel__Default=Warning Tenancy__DefaultMaxVehicles=100000
if [ "${STATS:-0}" = 1 ]; then export Database__EmbeddedServerSettings__shared_preload_libraries=pg_stat_statements; fi
if [ -n "${PERF:-}" ]; then export DOTNET_PerfMapEnabled=1 DOTNET_EnableWriteXorExecute=0; mkdir -p "$PERF"; fi
dotnet "$dir/svc/FusionService.dll" > "$data/service.log" 2>&1 &
svc=$!
for _ in $(seq 1 120); do curl -sf http://127.0.0.1:5091/health/ready >/dev/null 2>&1 && break; sleep 1; done
KEY=$(dotnet "$dir/svc/FusionService.dll" keys create --fleet loadrun --role ingest 2>/dev/null | grep -i secret | awk '{print $NF}')
ADMIN=$(dotnet "$dir/svc/FusionService.dll" keys create --fleet loadrun --role admin 2>/dev/null | grep -i secret | awk '{print $NF}')
dotnet "$dir/load/FusionService.LoadTools.dll" load --url http://127.0.0.1:5091 --key "$KEY" --seconds 10 --vehicle-prefix warm- \
  --copy-compare no --shape "$shape" "$@" > /dev/null 2>&1
psql_() { runuser -u postgres -- psql -h 127.0.0.1 -p "$(sed -n 4p "$Database__DataDirectory/postmaster.pid")" -d fusion -X -qAt -c "$1"; }
if [ "${STATS:-0}" = 1 ]; then psql_ "CREATE EXTENSION IF NOT EXISTS pg_stat_statements; SELECT pg_stat_statements_reset();" > /dev/null; fi
svc0=$(ticks_of "$svc"); pg0=$(postgres_ticks)
if [ -n "${PERF:-}" ]; then
  perf record -F 499 -g -p "$svc" -o "$PERF/perf.data" -- sleep "$(( secs > 4 ? secs - 2 : secs ))" > /dev/null 2>&1 &
  perf_pid=$!
fi
out=$(bash -c 'dotnet "$0/load/FusionService.LoadTools.dll" load "${@:1}"; echo "load-ticks $(awk "{print \$16 + \$17}" /proc/$$/stat)"' \
  "$dir" --url http://127.0.0.1:5091 --key "$KEY" --seconds "$secs" --shape "$shape" "$@" --metrics-token "$ADMIN" --copy-compare no)
svc1=$(ticks_of "$svc"); pg1=$(postgres_ticks)
if [ -n "${PERF:-}" ]; then
  wait "$perf_pid"
  cp "/tmp/perf-$svc.map" "$PERF/" 2>/dev/null
  perf report -i "$PERF/perf.data" --no-children --sort dso,symbol --stdio -g none 2>/dev/null | grep -v '^#' | grep '%' | head -80 > "$PERF/self.txt"
  perf report -i "$PERF/perf.data" --children --sort dso,symbol --stdio -g none 2>/dev/null | grep -v '^#' | grep '%' | head -150 > "$PERF/inclusive.txt"
fi
echo "$out" | grep -v '^load-ticks'
if [ "${CPU:-0}" = 1 ]; then
  accepted=$(echo "$out" | sed -n 's/^accepted \([0-9,]*\) messages.*/\1/p' | tr -d ,)
  load_ticks=$(echo "$out" | sed -n 's/^load-ticks //p')
  awk -v n="${accepted:-0}" -v s=$(( (svc1 - svc0) * tick_ms )) -v p=$(( (pg1 - pg0) * tick_ms )) -v l=$(( load_ticks * tick_ms )) \
    'BEGIN { if (n > 0) printf "cpu ms per 1,000 messages: service %.1f, postgres %.1f, load tool %.1f (%d messages)\n", s * 1000 / n, p * 1000 / n, l * 1000 / n, n }'
fi
if [ "${STATS:-0}" = 1 ]; then
  accepted=$(echo "$out" | sed -n 's/^accepted \([0-9,]*\) messages.*/\1/p' | tr -d ,)
  echo "statements by execution time, ms per 1,000 messages (calls, rows):"
  psql_ "SELECT round((total_exec_time * 1000 / ${accepted:-1})::numeric, 1) || ' ms  (' || calls || ', ' || rows || ')  '
         || left(regexp_replace(query, '\s+', ' ', 'g'), 110) FROM pg_stat_statements
         WHERE query NOT LIKE '%pg_stat_statements%' ORDER BY total_exec_time DESC LIMIT 8"
fi
if [ "${STORAGE:-0}" = 1 ]; then
  sleep "${FOLD_WAIT:-0}"
  psql_ "VACUUM FULL fusion.measurement_chunks" && psql_ "VACUUM FULL fusion.fused_states"
  psql_ "SET search_path = fusion;
    WITH m AS (SELECT sum(count)::float8 AS n, count(*) AS chunks FROM measurement_chunks),
         s AS (SELECT sum(pg_total_relation_size(i.inhrelid)) FILTER (WHERE i.inhparent = 'measurement_chunks'::regclass) AS c,
                      sum(pg_total_relation_size(i.inhrelid)) FILTER (WHERE i.inhparent = 'fused_states'::regclass) AS f
               FROM pg_inherits i)
    SELECT format('stored: %s measurements in %s chunks (%s a chunk); bytes per measurement: chunks %s, fused states %s, together %s',
                  m.n, m.chunks, round((m.n / m.chunks)::numeric, 1), round((s.c / m.n)::numeric, 1), round((s.f / m.n)::numeric, 1),
                  round(((s.c + s.f) / m.n)::numeric, 1))
    FROM m, s"
fi
kill "$svc"; wait "$svc" 2>/dev/null
du -sh "$data/pg" 2>/dev/null | awk '{print "data dir: "$1}'
rm -rf "$data"

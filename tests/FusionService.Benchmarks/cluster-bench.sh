#!/usr/bin/env bash
# ./build.sh cluster-bench [SECONDS]: figures of the cluster mode (docs/cluster.md), not a test.
#  1. Ingest with 1, 2 and 3 service processes in one cluster (Orleans:ClusterMode=Postgres) on one throwaway
#     PostgreSQL 15: one `load` command per process, all at once for SECONDS (default 30), each posting its own 1000/N
#     vehicles to its own process (so the tracks live where their messages arrive). Prints each load's summary line and
#     the sum of the rates; the p99 reported is the largest of the loads' p99s.
#  2. Kill: two processes; 1 batch for one vehicle to process A (which then hosts its track), SIGKILL A, and the time
#     until process B answers GET /v1/vehicles/{id}/state with 200, with Orleans' default failure detection (probe 5 s,
#     3 missed) and with probe 1 s, 2 missed. Repeated KILL_RUNS times (default 3).
# Needs a Release build (./build.sh test or dotnet build -c Release) and the PostgreSQL 15 server binaries.
set -euo pipefail
cd "$(dirname "$0")/../.."
root=$(pwd)
seconds=${1:-30}
kill_runs=${KILL_RUNS:-3}
dll="$root/src/FusionService/bin/Release/net10.0/FusionService.dll"
load_dll="$root/tests/FusionService.LoadTools/bin/Release/net10.0/FusionService.LoadTools.dll"
[ -f "$dll" ] && [ -f "$load_dll" ] || { echo "cluster-bench: build first (dotnet build FusionService.sln -c Release)" >&2; exit 2; }
pgbin=/usr/lib/postgresql/15/bin
work=$(mktemp -d /tmp/fusion-cluster-bench.XXXXXX)
pids=()

as_postgres() { if [ "$(id -u)" = 0 ]; then runuser -u postgres -- "$@"; else "$@"; fi; }
free_port() { python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1",0)); print(s.getsockname()[1]); s.close()'; }
stop_services() { for p in "${pids[@]}"; do kill "$p" 2>/dev/null || true; done; for p in "${pids[@]}"; do wait "$p" 2>/dev/null || true; done; pids=(); }
cleanup() {
  stop_services
  as_postgres "$pgbin/pg_ctl" -D "$work/pg" -m fast stop >/dev/null 2>&1 || true
  rm -rf "$work"
}
trap cleanup EXIT

[ "$(id -u)" = 0 ] && chown postgres: "$work"
pg_port=$(free_port)
as_postgres "$pgbin/initdb" -D "$work/pg" -A trust -E UTF8 --locale=C.UTF-8 --no-sync -U postgres >/dev/null
as_postgres "$pgbin/pg_ctl" -D "$work/pg" -w -l "$work/pg.log" -o "-p $pg_port -k $work -c listen_addresses=127.0.0.1 -c shared_buffers=512MB -c max_wal_size=4GB -c checkpoint_timeout=15min -c wal_compression=on -c max_connections=300" start >/dev/null
"$pgbin/createdb" -h 127.0.0.1 -p "$pg_port" -U postgres fusion
export ConnectionStrings__Fusion="Host=127.0.0.1;Port=$pg_port;Database=fusion;Username=postgres"
export Security__RateLimitPermits=100000000 Security__FleetRateLimitPermits=100000000 Security__MessageLimitPermits=2000000000 \
  Security__FleetMessageLimitPermits=2000000000 Operations__MetricsAnonymous=true \
  Serilog__MinimumLevel__Default=Warning Serilog__MinimumLevel__Override__Orleans=Error

# Starts one service process in cluster CLUSTER; prints its URL. Extra environment as further arguments (NAME=VALUE).
start_service() {
  local cluster=$1; shift
  local port; port=$(free_port)
  local url="http://127.0.0.1:$port"
  env Orleans__ClusterMode=Postgres Orleans__ClusterId="$cluster" Orleans__AdvertisedAddress=127.0.0.1 \
    Orleans__SiloPort="$(free_port)" Orleans__GatewayPort=0 ASPNETCORE_URLS="$url" "$@" \
    dotnet "$dll" >>"$work/service-$port.log" 2>&1 &
  pids+=($!)
  LAST_PID=$!
  LAST_URL=$url
}
wait_ready() {
  local url=$1 deadline=$((SECONDS + 90))
  until curl -sf -o /dev/null "$url/health/ready"; do
    [ $SECONDS -lt $deadline ] || { echo "cluster-bench: $url not ready" >&2; exit 1; }
    sleep 0.2
  done
}

# Keys (the first process applies the migrations).
start_service keys; wait_ready "$LAST_URL"; stop_services
ingest_key=$(dotnet "$dll" keys create --fleet bench --role ingest | sed -n 's/^secret (shown only now): //p')
read_key=$(dotnet "$dll" keys create --fleet bench --role read | sed -n 's/^secret (shown only now): //p')

echo "== ingest, $seconds s per run, 1000 vehicles in batches of 500, 8 requests in flight per process"
for n in 1 2 3; do
  urls=()
  for i in $(seq 1 "$n"); do start_service "ingest-$n"; urls+=("$LAST_URL"); done
  for u in "${urls[@]}"; do wait_ready "$u"; done
  loads=()
  for i in $(seq 1 "$n"); do
    dotnet "$load_dll" load --url "${urls[$((i - 1))]}" --key "$ingest_key" --seconds "$seconds" --vehicles $((1000 / n)) \
      --vehicle-prefix "n$n-p$i-" --copy-compare no >"$work/load-$n-$i.txt" 2>&1 &
    loads+=($!)
  done
  for l in "${loads[@]}"; do wait "$l"; done
  total=0; worst=0
  for i in $(seq 1 "$n"); do
    line=$(grep '^accepted ' "$work/load-$n-$i.txt")
    echo "  $n process(es), load $i: $line"
    rate=$(sed -n 's/.*: \([0-9,]*\) msg\/s.*/\1/p' <<<"$line" | tr -d ,)
    p99=$(sed -n 's/.* p99 \([0-9.]*\) ms.*/\1/p' <<<"$line")
    total=$((total + rate))
    worst=$(python3 -c "print(max($worst, $p99))")
  done
  echo "$n process(es): $total msg/s in total, ack p99 (largest of the loads) $worst ms"
  stop_services
done

echo "== a vehicle served again after its process is killed (SIGKILL), $kill_runs runs per setting"
for setting in "5 3" "1 2"; do
  read -r probe missed <<<"$setting"
  for run in $(seq 1 "$kill_runs"); do
    start_service "kill-$probe-$run" Orleans__ProbeTimeoutS="$probe" Orleans__MissedProbesLimit="$missed"; a_pid=$LAST_PID; a_url=$LAST_URL
    start_service "kill-$probe-$run" Orleans__ProbeTimeoutS="$probe" Orleans__MissedProbesLimit="$missed"; b_url=$LAST_URL
    wait_ready "$a_url"; wait_ready "$b_url"
    prefix="kill-$probe-$run-"
    dotnet "$load_dll" load --url "$a_url" --key "$ingest_key" --vehicles 1 --batches 2 --batch-size 200 --vehicle-prefix "$prefix" --copy-compare no >/dev/null
    vehicle="${prefix}000000"
    curl -sf -o /dev/null -H "Authorization: Bearer $read_key" "$a_url/v1/vehicles/$vehicle/state"
    kill -9 "$a_pid"
    start=$(date +%s%N)
    until curl -sf -o /dev/null --max-time 2 -H "Authorization: Bearer $read_key" "$b_url/v1/vehicles/$vehicle/state"; do
      sleep 0.05
      [ $(( ($(date +%s%N) - start) / 1000000000 )) -lt 120 ] || { echo "cluster-bench: not served again within 120 s" >&2; exit 1; }
    done
    end=$(date +%s%N)
    echo "probe ${probe} s x ${missed} missed, run $run: served again by the other process $(python3 -c "print(f'{($end - $start) / 1e9:.2f}')") s after the kill"
    stop_services
  done
done

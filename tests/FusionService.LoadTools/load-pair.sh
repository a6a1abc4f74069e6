#!/usr/bin/env bash
# One load run against a build of the service, for before/after pairs on a noisy machine:
#   tests/FusionService.LoadTools/load-pair.sh BUILD_DIR SECONDS [per-vehicle|interleaved] [more load options ...]
# (more options go to both load runs, e.g. --batch-size 5000 --vehicle-run 10)
# BUILD_DIR holds svc/ (the service's Release output, e.g. a copy of src/FusionService/bin/Release/net10.0) and load/
# (tests/FusionService.LoadTools/bin/Release/net10.0). Starts the service with a fresh data directory (its own embedded
# PostgreSQL) on port 5091 with the limits lifted, creates keys, warms up for 10 s with other vehicle ids, runs the load
# tool for SECONDS, prints its result and the data directory's size, and stops the service it started (by PID).
# Alternate two builds (A B A B ...) and compare pair by pair.
set -u
dir=$1; secs=$2; shape=${3:-per-vehicle}
shift $(( $# < 3 ? $# : 3 ))
data=$(mktemp -d /tmp/loadpg.XXXX); chmod 755 "$data"
export Database__DataDirectory=$data/pg
export ASPNETCORE_URLS=http://127.0.0.1:5091
export Security__RateLimitPermits=10000000 Security__FleetRateLimitPermits=10000000
export Security__MessageLimitPermits=2000000000 Security__FleetMessageLimitPermits=2000000000
export Serilog__MinimumLevel__Default=Warning Tenancy__DefaultMaxVehicles=100000
dotnet "$dir/svc/FusionService.dll" > "$data/service.log" 2>&1 &
svc=$!
for _ in $(seq 1 120); do curl -sf http://127.0.0.1:5091/health/ready >/dev/null 2>&1 && break; sleep 1; done
KEY=$(dotnet "$dir/svc/FusionService.dll" keys create --fleet loadrun --role ingest 2>/dev/null | grep -i secret | awk '{print $NF}')
ADMIN=$(dotnet "$dir/svc/FusionService.dll" keys create --fleet loadrun --role admin 2>/dev/null | grep -i secret | awk '{print $NF}')
dotnet "$dir/load/FusionService.LoadTools.dll" load --url http://127.0.0.1:5091 --key "$KEY" --seconds 10 --vehicle-prefix warm- \
  --copy-compare no --shape "$shape" "$@" > /dev/null 2>&1
dotnet "$dir/load/FusionService.LoadTools.dll" load --url http://127.0.0.1:5091 --key "$KEY" --seconds "$secs" --shape "$shape" "$@" \
  --metrics-token "$ADMIN" --copy-compare no
kill "$svc"; wait "$svc" 2>/dev/null
du -sh "$data/pg" 2>/dev/null | awk '{print "data dir: "$1}'
rm -rf "$data"

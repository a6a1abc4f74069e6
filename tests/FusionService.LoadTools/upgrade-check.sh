#!/usr/bin/env bash
# Upgrade check: an OLD build of the service stores SECONDS of load data, then a NEW build starts on the same data
# directory (running the migrations the old one lacks, e.g. 0013) and the stored measurements are compared: count,
# pending count and the sum of v0 over judged_measurements(...) before and after, with the tables' size and the new
# build's start-up time.
#   tests/FusionService.LoadTools/upgrade-check.sh OLD_BUILD_DIR NEW_BUILD_DIR SECONDS
# Each BUILD_DIR holds svc/ and load/ as for load-pair.sh. Uses /tmp/migcheck and port 5093; needs bc and psql.
set -u
old=$1; new=$2; secs=$3
data=/tmp/migcheck; rm -rf $data; mkdir -p $data; chmod 755 $data
export Database__DataDirectory=$data/pg ASPNETCORE_URLS=http://127.0.0.1:5093
export Security__RateLimitPermits=10000000 Security__FleetRateLimitPermits=10000000
export Security__MessageLimitPermits=2000000000 Security__FleetMessageLimitPermits=2000000000
export Serilog__MinimumLevel__Default=Warning Tenancy__DefaultMaxVehicles=100000
dotnet "$old/svc/FusionService.dll" > $data/old.log 2>&1 &
svc=$!
for _ in $(seq 1 120); do curl -sf http://127.0.0.1:5093/health/ready >/dev/null 2>&1 && break; sleep 1; done
KEY=$(dotnet "$old/svc/FusionService.dll" keys create --fleet migcheck --role ingest 2>/dev/null | grep -i secret | awk '{print $NF}')
dotnet "$old/load/FusionService.LoadTools.dll" load --url http://127.0.0.1:5093 --key "$KEY" --seconds "$secs" --copy-compare no | grep accepted
sleep 5
port=$(sed -n 4p $data/pg/postmaster.pid)
q() { runuser -u postgres -- psql -h 127.0.0.1 -p $port -d fusion -At -c "SET search_path = fusion; $1"; }
echo "old: $(q "SELECT count(*), count(*) FILTER (WHERE j.outcome = 4), sum(j.v0)::numeric(30,6) FROM (SELECT DISTINCT vehicle_id FROM vehicles) v CROSS JOIN LATERAL judged_measurements((SELECT fleet_id FROM fleets WHERE name = 'migcheck'), v.vehicle_id, 0, 9223372036854775807, '-infinity', 'infinity') j")"
echo "old size: $(q "SELECT pg_size_pretty(sum(pg_total_relation_size(c.oid))) FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace WHERE n.nspname = 'fusion' AND c.relkind = 'r' AND (c.relname LIKE 'measurement%' OR c.relname LIKE 'fused_states%')")"
kill $svc; wait $svc 2>/dev/null
start=$(date +%s.%N)
dotnet "$new/svc/FusionService.dll" > $data/new.log 2>&1 &
svc=$!
for _ in $(seq 1 600); do curl -sf http://127.0.0.1:5093/health/ready >/dev/null 2>&1 && break; sleep 0.5; done
echo "new build ready after $(echo "$(date +%s.%N) - $start" | bc) s (migration 0013 included)"
port=$(sed -n 4p $data/pg/postmaster.pid)
echo "new: $(q "SELECT count(*), count(*) FILTER (WHERE j.outcome = 4), sum(j.v0)::numeric(30,6) FROM (SELECT DISTINCT vehicle_id FROM vehicles) v CROSS JOIN LATERAL judged_measurements((SELECT fleet_id FROM fleets WHERE name = 'migcheck'), v.vehicle_id, 0, 9223372036854775807, '-infinity', 'infinity') j")"
echo "new size: $(q "SELECT pg_size_pretty(sum(pg_total_relation_size(c.oid))) FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace WHERE n.nspname = 'fusion' AND c.relkind = 'r' AND (c.relname LIKE 'measurement%' OR c.relname LIKE 'fused_states%')")"
grep -i "migrat" $data/new.log | head -5
kill $svc; wait $svc 2>/dev/null

#!/usr/bin/env bash
# FusionService build entry point. Every step a fresh machine needs is here.
#   ./build.sh test    restore, build, run every test suite; last line "N passed, N failed"
#   ./build.sh run     the service with its own PostgreSQL under ./data/pg and the invented demo fleet feeding it
#   ./build.sh serve   the service alone (no demo fleet)
#   ./build.sh serve-history   beside run/serve: a history-read process on :5081 at the lowest processor weight
#   ./build.sh bench   run the BenchmarkDotNet suite (see docs/benchmarks.md)
#   ./build.sh load ... | alert-latency ...   load and measuring tools against a running service (tests/FusionService.LoadTools)
#   ./build.sh cluster-bench [SECONDS]   ingest with 1, 2, 3 processes in cluster mode, and recovery after a kill -9
#   ./build.sh fault-harness   three service processes through kill -9, clean stop, database outage and a poison message
set -euo pipefail
cd "$(dirname "$0")"
root=$(pwd)

ensure_prerequisites() {
  if ! command -v dotnet >/dev/null 2>&1; then
    echo "build.sh: the .NET SDK (see global.json) is required on PATH" >&2
    exit 2
  fi
  # The service and the tests start a private PostgreSQL 15 cluster from the machine's server binaries.
  if [ ! -x /usr/lib/postgresql/15/bin/initdb ] && ! command -v initdb >/dev/null 2>&1; then
    if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
      echo "==> installing PostgreSQL 15 server binaries (apt)"
      apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq postgresql-15 >/dev/null
    else
      echo "build.sh: PostgreSQL 15 server binaries (initdb, pg_ctl) are required; install postgresql-15" >&2
      exit 2
    fi
  fi
  # The service's build copies the dashboard's libraries from npm (src/FusionService.Dashboard/package-lock.json).
  if ! command -v npm >/dev/null 2>&1; then
    apt_install "Node.js and npm (the dashboard's libraries)" nodejs npm
  fi
}

# Installs Debian packages when running as root with apt; otherwise says what is missing and stops.
apt_install() {
  local what=$1
  shift
  if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
    echo "==> installing $what (apt: $*)"
    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "$@" >/dev/null
  else
    echo "build.sh: $what required; install the Debian packages: $*" >&2
    exit 2
  fi
}

# The browser tests drive Debian's chromium through its chromedriver.
ensure_browser() {
  if [ ! -x /usr/bin/chromium ] || [ ! -x /usr/bin/chromedriver ]; then
    apt_install "chromium and chromedriver (browser tests)" chromium chromium-driver
  fi
}

run_tests() {
  ensure_prerequisites
  ensure_browser
  local results="$root/artifacts/test-results"
  rm -rf "$results"
  mkdir -p "$results"
  # Screenshots of the browser tests land beside the TRX files.
  export FUSION_TEST_ARTIFACTS="$results/browser"
  echo "==> restore"
  dotnet restore FusionService.sln
  echo "==> build (Release, warnings are errors)"
  dotnet build FusionService.sln -c Release --no-restore -nologo
  echo "==> test"
  local status=0
  dotnet test FusionService.sln -c Release --no-build --nologo \
    --logger "trx" --logger "console;verbosity=normal" --results-directory "$results" || status=$?
  summarize "$results"
  return $status
}

run_fault_harness() {
  ensure_prerequisites
  local results="$root/artifacts/fault-harness"
  rm -rf "$results"
  mkdir -p "$results"
  dotnet build FusionService.sln -c Release -nologo
  local status=0
  dotnet test tests/FusionService.Tests -c Release --no-build --nologo --filter "Category=FaultHarness" \
    --logger "trx" --logger "console;verbosity=normal" --results-directory "$results" || status=$?
  summarize "$results"
  return $status
}

# Prints "FAILED: <test>" for each failed result of a TRX file, then up to 8 lines of its message and the first line
# of its stack trace, indented (XML entities decoded).
failures() {
  awk '
    function decode(s) { gsub(/&lt;/, "<", s); gsub(/&gt;/, ">", s); gsub(/&quot;/, "\"", s); gsub(/&apos;/, "\047", s);
                         gsub(/&#xD;/, "", s); gsub(/&amp;/, "\\&", s); return s }
    /<UnitTestResult / {
      failed = ($0 ~ /outcome="(Failed|Error|Timeout)"/); part = ""; shown = 0
      if (failed && match($0, /testName="[^"]*"/)) print "FAILED: " decode(substr($0, RSTART + 10, RLENGTH - 11))
    }
    failed && /<Message>/ { part = "message"; sub(/.*<Message>/, "") }
    failed && /<StackTrace>/ { part = "stack"; shown = 0; sub(/.*<StackTrace>/, "") }
    failed && part != "" {
      line = $0; done = sub(/<\/(Message|StackTrace)>.*/, "", line)
      if ((part == "message" && shown < 8) || (part == "stack" && shown < 1)) { print "    " decode(line); shown++ }
      if (done) { part = ""; shown = 0 }
    }
    /<\/UnitTestResult>/ { failed = 0 }
  ' "$1"
}

# Counts outcomes from the TRX files the test run wrote, so the closing line reflects real results.
summarize() {
  local dir=$1 passed=0 failed=0 skipped=0 p f t e n
  shopt -s nullglob
  for trx in "$dir"/*.trx; do
    local counters
    counters=$(grep -o '<Counters [^>]*>' "$trx" | head -n 1)
    p=$(sed -n 's/.* passed="\([0-9]*\)".*/\1/p' <<<"$counters")
    f=$(sed -n 's/.* failed="\([0-9]*\)".*/\1/p' <<<"$counters")
    e=$(sed -n 's/.* error="\([0-9]*\)".*/\1/p' <<<"$counters")
    t=$(sed -n 's/.* timeout="\([0-9]*\)".*/\1/p' <<<"$counters")
    n=$(sed -n 's/.* notExecuted="\([0-9]*\)".*/\1/p' <<<"$counters")
    passed=$((passed + ${p:-0}))
    failed=$((failed + ${f:-0} + ${e:-0} + ${t:-0}))
    skipped=$((skipped + ${n:-0}))
    # Name every failed test again here: CI keeps only the tail of the output, where the console logger's lines
    # about a failure early in the run are long gone.
    # Each with the first lines of its message and of its stack trace, so that a failure seen only in CI says why.
    failures "$trx"
  done
  if [ "$skipped" -gt 0 ]; then
    echo "$passed passed, $failed failed, $skipped skipped"
  else
    echo "$passed passed, $failed failed"
  fi
}

run_service() {
  ensure_prerequisites
  export ASPNETCORE_URLS="${ASPNETCORE_URLS:-http://127.0.0.1:5080}"
  export Database__DataDirectory="${Database__DataDirectory:-$root/data/pg}"
  dotnet run -c Release --project src/FusionService -- "$@"
}

case "${1:-test}" in
  test) run_tests ;;
  fault-harness) run_fault_harness ;;
  run)
    shift
    run_service demo "$@"
    ;;
  serve)
    shift
    run_service "$@"
    ;;
  serve-history)
    # A process that answers only the history reads (Service:Role=HistoryReads) from the running service's embedded
    # cluster (same data directory), in a session of its own at autogroup nice HISTORY_NICE (default 19, weight 15
    # against 1,024), so that its smoothing replays give way to ingest (docs/limits-and-keys.md).
    shift
    ensure_prerequisites
    export Service__Role=HistoryReads Orleans__GatewayPort=0
    export Orleans__SiloPort="${Orleans__SiloPort:-11112}" ASPNETCORE_URLS="${ASPNETCORE_URLS:-http://127.0.0.1:5081}"
    export Database__DataDirectory="${Database__DataDirectory:-$root/data/pg}"
    dotnet build -c Release -nologo -v quiet src/FusionService
    cd src/FusionService   # the same content root (appsettings.json) as run/serve's `dotnet run --project`
    exec setsid sh -c 'echo "$0" > /proc/self/autogroup && exec dotnet "$@"' "${HISTORY_NICE:-19}" \
      bin/Release/net10.0/FusionService.dll "$@"
    ;;
  keys)
    # The same data directory as run/serve, so that the command finds the running service's embedded cluster.
    export Database__DataDirectory="${Database__DataDirectory:-$root/data/pg}"
    dotnet run -c Release --project src/FusionService -- "$@"
    ;;
  load|alert-latency)
    # Tools against a running service (tests/FusionService.LoadTools); load's COPY comparison attaches to the same
    # embedded cluster as run/serve.
    export Database__DataDirectory="${Database__DataDirectory:-$root/data/pg}"
    dotnet run -c Release --project tests/FusionService.LoadTools -- "$@"
    ;;
  bench)
    ensure_prerequisites
    shift || true
    # The documented form is `./build.sh bench -- --filter ...`; BenchmarkDotNet would read that "--" as the end of its
    # own options and ask for a class instead.
    if [ "${1:-}" = "--" ]; then shift; fi
    dotnet run -c Release --project tests/FusionService.Benchmarks -- "$@"
    ;;
  cluster-bench)
    ensure_prerequisites
    shift || true
    dotnet build FusionService.sln -c Release -nologo -v quiet
    tests/FusionService.Benchmarks/cluster-bench.sh "$@"
    ;;
  *)
    echo "usage: ./build.sh [test|fault-harness|run|serve|serve-history|keys create ...|load ...|alert-latency ...|bench [BenchmarkDotNet args]|cluster-bench [seconds]]" >&2
    exit 2
    ;;
esac

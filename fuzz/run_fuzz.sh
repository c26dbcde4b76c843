#!/usr/bin/env bash
# Runs one libFuzzer target with the project's sanitizer settings.
#   run_fuzz.sh TARGET SEED_DIR SECONDS [ARTIFACT_DIR]   fuzz from the seeds for SECONDS
#   run_fuzz.sh TARGET --replay FILE...                  run each input once (regressions)
# Fuzzing works on a copy of the seeds in a temporary folder, so the committed
# corpus never changes (set FUZZ_CORPUS to keep what was found); a crashing input is saved in ARTIFACT_DIR and the exit
# status is non-zero. The last line printed gives executions per second.
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
target="$1"
shift
# Leaks inside OpenMPI are suppressed (tests/sanitizer/lsan.supp, which explains each entry).
export ASAN_OPTIONS="${ASAN_OPTIONS:-detect_leaks=1:malloc_context_size=40}"
# MPI keeps its start-up allocations until exit, so the check at exit is off; libFuzzer
# still checks every input for leaks.
export LSAN_OPTIONS="${LSAN_OPTIONS:-suppressions=$here/../tests/sanitizer/lsan.supp:print_suppressions=0:leak_check_at_exit=0}"
# Open MPI's MPI-IO component is OMPIO here, not the ROMIO the library prefers
# (src/api/runtime.cpp): ROMIO keeps 8 bytes per file open and loads more
# components on the first open, and with the fast unwinder (fuzzing at ~10x the
# speed of the slow one) those stacks end inside Open MPI's frame-pointer-less
# code, where no suppression can name them, so libFuzzer's per-input leak check
# would stop on the first input. The targets fuzz our input checks, which do
# not depend on the component.
export OMPI_MCA_io="${OMPI_MCA_io:-ompio}"
export UBSAN_OPTIONS="${UBSAN_OPTIONS:-print_stacktrace=1:halt_on_error=1}"
limits=(-timeout=60 -rss_limit_mb=2048 -malloc_limit_mb=1024)

if [ "${1:-}" = "--replay" ]; then
  shift
  exec timeout 600 "$target" "${limits[@]}" "$@"
fi

seeds="$1"
seconds="$2"
artifacts="${3:-$PWD/fuzz-artifacts}"
mkdir -p "$artifacts"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
log="$tmp/log"
# FUZZ_CORPUS: a folder that keeps the inputs found, so later runs go on from there.
work="${FUZZ_CORPUS:-$tmp/corpus}"
mkdir -p "$work"
status=0
timeout $((seconds + 120)) "$target" "${limits[@]}" -max_total_time="$seconds" -print_final_stats=1 \
  -artifact_prefix="$artifacts/$(basename "$target")-" "$work" "$seeds" >"$log" 2>&1 || status=$?
if [ "$status" -ne 0 ]; then
  tail -n 80 "$log"
  echo "$(basename "$target"): FAILED (status $status); the input is in $artifacts" >&2
  exit "$status"
fi
runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log")
rate=$(sed -n 's/^stat::average_exec_per_sec: *//p' "$log")
echo "$(basename "$target"): $runs inputs in $seconds s, $rate exec/s, no failure"

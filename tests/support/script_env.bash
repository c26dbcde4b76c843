# Shared set-up for the test scripts (tests/cli, tests/outside): source it first.
#   source "$LODESTONE_SOURCE/tests/support/script_env.bash"
# Gives: strict mode (a failing script names its last failed command); checks that the suite's environment is set (LODESTONE,
# LODESTONE_SOURCE, LODESTONE_BUILD); $PY, Debian's Python (it has numpy, scipy
# and h5py; the one first on PATH may not); $work, a temporary folder removed on
# exit; $bg, the PID of a background job killed on exit if still running; await_line and
# await_exit (hang-guarded waits for a line in a log and for a process to end);
# MPI=(mpirun ...) for running ranks on this machine; run P CMD... (mpirun with
# a timeout, so a hang fails instead of blocking); fail MESSAGE.
set -Eeuo pipefail
# The last command that failed is remembered; if the script then fails, the exit
# says which it was (a quiet command that fails still leaves a trace).
last_failure=""
trap 'last_failure="line $LINENO: $BASH_COMMAND"' ERR
: "${LODESTONE:?path to the lodestone binary}"
: "${LODESTONE_SOURCE:?path to the source tree}"
PY="${LODESTONE_PYTHON:-/usr/bin/python3}"
MPI=(mpirun --allow-run-as-root --oversubscribe)
RUN_TIMEOUT="${RUN_TIMEOUT:-120}"
work="$(mktemp -d)"
bg=""
script_env_cleanup() {
  local status=$?
  if [[ "$status" -ne 0 && -n "$last_failure" ]]; then echo "exit status $status; last failed command: $last_failure" >&2; fi
  if [[ -n "$bg" ]] && kill -0 "$bg" 2>/dev/null; then kill -KILL "$bg" 2>/dev/null || true; fi
  rm -rf "$work"
}
trap script_env_cleanup EXIT
run() { local p="$1"; shift; timeout "$RUN_TIMEOUT" "${MPI[@]}" -n "$p" "$@"; }
fail() { echo "FAIL: $*" >&2; exit 1; }
# await_line FILE PATTERN PID WHAT: waits until FILE holds PATTERN; fails, showing FILE,
# if PID ends first or a minute passes (a hang guard, not a timing check).
await_line() {
  local file="$1" pattern="$2" pid="$3" what="$4"
  for _ in $(seq 600); do
    if grep -q -- "$pattern" "$file" 2>/dev/null; then return 0; fi
    kill -0 "$pid" 2>/dev/null || break
    sleep 0.1
  done
  cat "$file"
  fail "$what"
}
# await_exit PID LOG WHAT: waits until PID has ended (a zombie counts); after two
# minutes (a hang guard) kills its process group, shows LOG and fails naming WHAT.
await_exit() {
  local pid="$1" log="$2" what="$3" state=""
  for _ in $(seq 1200); do
    state=$(ps -o stat= -p "$pid" 2>/dev/null || true)
    if [[ -z "$state" || "$state" == Z* ]]; then return 0; fi
    sleep 0.1
  done
  kill -KILL -- "-$pid" 2>/dev/null || kill -KILL "$pid" 2>/dev/null || true
  cat "$log"
  fail "$what: the script was still running 2 minutes later"
}

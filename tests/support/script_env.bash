# Shared set-up for the test scripts (tests/cli, tests/outside): source it first.
#   source "$LODESTONE_SOURCE/tests/support/script_env.bash"
# Gives: strict mode (a failing script names its last failed command); checks that the suite's environment is set (LODESTONE,
# LODESTONE_SOURCE, LODESTONE_BUILD); $PY, Debian's Python (it has numpy, scipy
# and h5py; the one first on PATH may not); $work, a temporary folder removed on
# exit; $bg, the PID of a background job killed on exit if still running;
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

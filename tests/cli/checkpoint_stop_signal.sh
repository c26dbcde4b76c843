#!/usr/bin/env bash
# Stopping on a signal: a SIGUSR1, SIGUSR2 or SIGTERM sent to one rank only is
# agreed by all ranks at the next boundary (exit 3); SIGUSR1 sent to mpirun is
# forwarded to the ranks; a second SIGINT ends a rank at once with status 130.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
DRIVER="$LODESTONE_BUILD/tests/checkpoint_kill_driver"

start() {  # start the driver on 3 ranks and wait (bounded) until it is ready
  timeout 60 "${MPI[@]}" -n 3 "$DRIVER" stop-wait "$@" >"$work/out" 2>&1 &
  bg=$!
  for _ in $(seq 1 400); do grep -q ready "$work/out" 2>/dev/null && return 0; sleep 0.025; done
  echo "driver never became ready"; cat "$work/out"; exit 1
}
ranks() { for mp in $(pgrep -P "$bg"); do pgrep -P "$mp"; done; }
finish() {  # wait for the driver; its exit status goes to rc
  rc=0
  wait "$bg" 2>/dev/null || rc=$?
  bg=""
}

for sig in USR1 USR2 TERM; do
  start
  one=$(ranks | tail -n 1)
  kill -s "$sig" "$one"
  finish
  [[ "$rc" == 3 ]] || { echo "SIG$sig to one rank: exit $rc, expected 3"; cat "$work/out"; exit 1; }
  grep -q "stopped by SIG$sig on 3 rank(s)" "$work/out" || { echo "SIG$sig: wrong report"; cat "$work/out"; exit 1; }
done

# mpirun forwards SIGUSR1 to every rank.
start
mp=$(pgrep -P "$bg")
kill -s USR1 "$mp"
finish
[[ "$rc" == 3 ]] || { echo "SIGUSR1 to mpirun: exit $rc, expected 3"; cat "$work/out"; exit 1; }

# Two SIGINTs to one rank of a driver that never reaches a boundary: the
# first only sets the flag, the second ends the rank at once with 130.
start deaf
one=$(ranks | head -n 1)
kill -s INT "$one"
sleep 0.3
kill -0 "$one" || { echo "one SIGINT ended the rank"; cat "$work/out"; exit 1; }
kill -s INT "$one"
finish
[[ "$rc" == 130 ]] || { echo "double SIGINT: exit $rc, expected 130"; cat "$work/out"; exit 1; }
grep -q "second interrupt" "$work/out" || { echo "double SIGINT: no message"; cat "$work/out"; exit 1; }
echo "signal stop checks passed"

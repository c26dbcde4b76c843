#!/usr/bin/env bash
# The plain-mpirun script that `lodestone plan --scheduler local` writes, when the terminal
# closes (HUP) and under a second Ctrl-C. mpirun runs in a session of its own, so a hangup
# reaches only the script: it must pass it on as a stop request (checkpoint, status 3),
# not leave the solve running unattended. A second Ctrl-C must end mpirun at once, even
# when the solver does not stop by itself. Either way no solver may outlive the script.
# The solver is a stand-in (tests/support/fake_solver.bash); the script leads a process
# group of its own, as in a terminal, and signals go to that whole group.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
cd "$work"
export FAKE_PIDS="$work/pids"
"$LODESTONE" generate laplace2d --nx 20 --ny 20 deck.h5 >/dev/null
"$LODESTONE" plan deck.h5 --pairs 2 --scheduler local --cores-per-node 2 --node-memory 1G \
  --lodestone "$LODESTONE_SOURCE/tests/support/fake_solver.bash" --out deck.sh >/dev/null

# start: runs the script leading a session of its own, SIGINT and SIGQUIT at their default as in a
# terminal; waits until the stand-in solver runs.
start() {
  rm -f pids log.txt deck.checkpoint.h5; : > pids
  "$PY" -c 'import os, signal, sys; signal.signal(signal.SIGINT, signal.SIG_DFL); signal.signal(signal.SIGQUIT, signal.SIG_DFL); os.setsid(); os.execv(sys.argv[1], sys.argv[1:])' \
    ./deck.sh > log.txt 2>&1 &
  bg=$!
  await_line log.txt "fake solver: iterating" "$bg" "the stand-in solver did not start"
}
# finish WHAT: waits for the script (a hang guard, not a timing check), sets rc, and checks
# that no stand-in solver is still running.
finish() {
  local state=""
  await_exit "$bg" log.txt "$1"
  rc=0
  wait "$bg" || rc=$?
  bg=""
  while read -r pid; do
    state=$(ps -o stat= -p "$pid" 2>/dev/null || true)
    if [[ -n "$state" && "$state" != Z* ]]; then
      kill -KILL "$pid" 2>/dev/null || true
      cat log.txt
      fail "$1: a solver (pid $pid) was left running after the script ended"
    fi
  done < pids
}

# The terminal closes: HUP to the foreground group. A checkpoint and status 3.
start
kill -HUP -- "-$bg"
finish "hangup"
[ "$rc" -eq 3 ] || { cat log.txt; fail "hangup: status $rc, expected 3"; }
[ -f deck.checkpoint.h5 ] || { cat log.txt; fail "hangup: no checkpoint was written"; }
grep -q "HUP received; asking the solver to checkpoint and stop" log.txt || { cat log.txt; fail "hangup: not passed on"; }

# Ctrl-\ (QUIT) stops the same way.
start
kill -QUIT -- "-$bg"
finish "quit"
[ "$rc" -eq 3 ] || { cat log.txt; fail "quit: status $rc, expected 3"; }

# Two Ctrl-C to a solver that does not stop by itself: the second ends it at once.
export FAKE_IGNORE=1
start
kill -INT -- "-$bg"
for _ in $(seq 600); do
  if grep -q "INT received; asking the solver" log.txt; then break; fi
  sleep 0.1
done
kill -INT -- "-$bg"
finish "second Ctrl-C"
[ "$rc" -eq 130 ] || { cat log.txt; fail "second Ctrl-C: status $rc, expected 130"; }
grep -q "ended at once by a second interrupt" log.txt || { cat log.txt; fail "second Ctrl-C: not said"; }
echo "plan_local_signals: ok (a hangup or QUIT stops with a checkpoint; a second Ctrl-C ends the solver at once)"

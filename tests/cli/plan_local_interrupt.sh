#!/usr/bin/env bash
# The plain-mpirun script that `lodestone plan --scheduler local` writes, under Ctrl-C.
# A terminal sends SIGINT to its whole foreground process group: the script, and
# mpirun too unless it runs in a session of its own. mpirun takes SIGINT as a reason
# to end the ranks (TERM, then KILL a second later) and exits 1, so the script used
# to report "the solver failed" and lose the work since the last checkpoint. The
# script must instead pass the interrupt on as a stop request: the solver writes a
# checkpoint and the script ends with status 3, saying how to resume. The test
# stands in for the terminal: the script leads a process group of its own (started with setsid),
# and SIGINT goes to that whole group once the solver is iterating.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
cd "$work"

# Power iteration for 8 pairs of this Laplacian runs for minutes (clustered spectrum):
# it is still iterating when the interrupt comes.
"$LODESTONE" generate laplace2d --nx 150 --ny 150 deck.h5 >/dev/null
timeout 60 "$LODESTONE" plan deck.h5 --pairs 8 --method power --scheduler local --cores-per-node 2 \
  --node-memory 4G --lodestone "$LODESTONE" --out deck.sh >/dev/null
# interrupt SCRIPT: starts SCRIPT, sends SIGINT to its group once the solver iterates,
# waits for it; sets rc (its status). The log is in log.txt.
interrupt() {
  rm -f deck.checkpoint.h5 deck.checkpoint.h5.previous log.txt
  # A background job of this (non-interactive) shell starts with SIGINT ignored, and a
  # shell cannot trap a signal ignored on entry: start the script with SIGINT at its
  # default, as a terminal would, leading a session and process group of its own.
  "$PY" -c 'import os, signal, sys; signal.signal(signal.SIGINT, signal.SIG_DFL); os.setsid(); os.execv(sys.argv[1], sys.argv[1:])' \
    "$1" > log.txt 2>&1 &
  bg=$!
  # The solver prints a progress line every 5 s: once there is one, it is iterating.
  await_line log.txt "iteration" "$bg" "the solver printed no progress line"
  kill -INT -- "-$bg"
  # A stopped script ends within seconds; one still running after 2 minutes is hung.
  await_exit "$bg" log.txt "Ctrl-C"
  rc=0
  wait "$bg" || rc=$?
  grep -q "lodestone job: stopped early with a checkpoint in deck.checkpoint.h5" log.txt \
    || { cat log.txt; fail "$1: the script did not say it stopped with a checkpoint"; }
}

interrupt ./deck.sh
[ "$rc" -eq 3 ] || { cat log.txt; fail "Ctrl-C: the script ended with status $rc, expected 3"; }
if grep -q "solver failed\|after the stop request" log.txt; then cat log.txt; fail "Ctrl-C: mpirun ended the ranks"; fi
"$LODESTONE" inspect deck.checkpoint.h5 > ck.txt || { cat ck.txt; fail "the checkpoint does not read back"; }

# Where mpirun does get the signal (no setsid on the machine, or a TERM sent to every
# process of the job) it ends the ranks and exits 1. The ranks took the signal as a stop
# request and their checkpoint is whole, so the script still ends with status 3.
sed '/command -v setsid/d' deck.sh > deck-plain.sh
chmod +x deck-plain.sh
interrupt ./deck-plain.sh
[ "$rc" -eq 3 ] || { cat log.txt; fail "mpirun interrupted: the script ended with status $rc, expected 3"; }
grep -q "after the stop request; resuming will start from the checkpoint in deck.checkpoint.h5" log.txt \
  || { cat log.txt; fail "mpirun interrupted: the script did not explain the status"; }
echo "plan_local_interrupt: ok (Ctrl-C stopped the script with status 3 and a checkpoint, with and without setsid)"

#!/usr/bin/env bash
# Stand-in for `lodestone solve` in tests of the generated job scripts: it records its pid
# in $FAKE_PIDS, then waits. On USR1 (or TERM) it writes its --checkpoint file and exits 3,
# as the solver does; with FAKE_IGNORE=1 it ignores both, so only KILL ends it. With
# FAKE_EXIT=N it stops by itself at once with status N (3: its own --time-budget ran out).
ck=''
prev=''
for a in "$@"; do
  if [ "$prev" = --checkpoint ]; then ck=$a; fi
  prev=$a
done
echo "$$" >> "${FAKE_PIDS:?}"
if [ -n "${FAKE_EXIT:-}" ]; then : > "$ck"; exit "$FAKE_EXIT"; fi
if [ -n "${FAKE_IGNORE:-}" ]; then
  trap '' USR1 TERM INT
else
  trap ': > "$ck"; exit 3' USR1 TERM
fi
echo "fake solver: iterating" >&2
for _ in $(seq 600); do sleep 0.1; done
exit 0

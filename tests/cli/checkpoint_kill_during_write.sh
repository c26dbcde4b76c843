#!/usr/bin/env bash
# Kill during write: the ranks of a driver that writes checkpoints of a few MB
# back to back are SIGKILLed at random instants, many times; every time the
# checkpoint name must open and read back consistently (every value and the
# driver's own checksum), on a different rank count than wrote it.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
DRIVER="$LODESTONE_BUILD/tests/checkpoint_kill_driver"

ckpt="$work/kill.ckpt.h5"
rows=131072   # x 3 columns x 8 bytes: about 3 MB per checkpoint
trials=${CHECKPOINT_KILL_TRIALS:-12}
RANDOM=4242   # the same instants on every run
seen_previous=0
mid_write=0
for trial in $(seq 1 "$trials"); do
  before=$(stat -c %i "$ckpt" 2>/dev/null || echo none)
  timeout 60 "${MPI[@]}" -n 3 "$DRIVER" write "$ckpt" "$rows" 3 1000 >"$work/write.log" 2>&1 &
  bg=$!
  # Wait (bounded) until this writer has committed a checkpoint (a new file
  # under the name), so the kill lands while it is writing the next ones. The
  # change is noted once it is seen: the writer goes on renaming new files over
  # the name, and the file system may hand the old inode number out again.
  committed=0
  for _ in $(seq 1 400); do
    if [[ "$(stat -c %i "$ckpt" 2>/dev/null || echo none)" != "$before" ]]; then committed=1; break; fi
    sleep 0.025
  done
  [[ "$committed" -eq 1 ]] || {
    echo "trial $trial: no new checkpoint appeared"; cat "$work/write.log"; exit 1; }
  sleep "0.$(printf '%03d' $((RANDOM % 600)))"
  # SIGKILL every rank: the children of mpirun, which is the child of timeout.
  ranks=()
  for mp in $(pgrep -P "$bg" || true); do
    for r in $(pgrep -P "$mp" || true); do ranks+=("$r"); done
  done
  [[ ${#ranks[@]} -gt 0 ]] || { echo "trial $trial: the writer ended before the kill"; cat "$work/write.log"; exit 1; }
  kill -KILL "${ranks[@]}" 2>/dev/null || true
  wait "$bg" 2>/dev/null || true
  bg=""
  # A temporary file left behind means the kill landed in the middle of a write.
  if [[ -n "$(find "$work" -name '.kill.ckpt.h5.partial-*' -print -quit)" ]]; then mid_write=$((mid_write + 1)); fi
  out=$(timeout 60 "${MPI[@]}" -n 2 "$DRIVER" check "$ckpt" "$rows" 3 2>&1) || {
    echo "trial $trial: the checkpoint does not read back after a kill:"; echo "$out"; ls -la "$work"; exit 1; }
  grep -q "^ok generation" <<<"$out" || { echo "trial $trial: unexpected check output: $out"; exit 1; }
  grep -q "previous generation" <<<"$out" && seen_previous=$((seen_previous + 1))
  echo "trial $trial: $out"
done
# Temporaries of killed writers are removed by the next write of the same name.
timeout 60 "${MPI[@]}" -n 2 "$DRIVER" write "$ckpt" "$rows" 3 1 >/dev/null
left=$(find "$work" -name '.kill.ckpt.h5.*' | wc -l)
[[ "$left" -eq 0 ]] || { echo "temporary files left behind:"; ls -la "$work"; exit 1; }
echo "all $trials kill trials left a readable checkpoint ($mid_write killed mid-write, $seen_previous fell back to the previous generation)"
[[ "$mid_write" -gt 0 ]] || { echo "no kill landed during a write: the test did not test anything"; exit 1; }

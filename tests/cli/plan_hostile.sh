#!/usr/bin/env bash
# Hostile values on their way into job scripts: names with spaces, quotes, $(...),
# backticks, semicolons and newlines are refused with a clear message (exit 2), or
# — for file paths, which may legitimately hold such characters — quoted so that
# nothing in them runs. The generated scripts pass bash -n and shellcheck, and are
# then run with stand-in mpirun/scontrol/qsub commands that record their arguments:
# the paths arrive intact, no marker file appears, and the exit statuses 0, 3, 1
# and a forwarded USR1 lead to the documented actions. With stand-in nproc and
# lscpu, the local script oversubscribes exactly when the planned ranks exceed the
# cores it finds.
# The hostile values below are single-quoted on purpose: they must stay literal.
# shellcheck disable=SC2016
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
# One planner rank needs no mpirun (MPI starts as a singleton): faster.
one() { timeout 120 "$@"; }
cd "$work"
marker_check() {
  for m in PWNED1 PWNED2 PWNED3 PWNED4; do
    [ ! -e "$work/$m" ] || fail "injected command ran ($m exists) $1"
  done
}

one "$LODESTONE" generate laplace1d --n 2000 plain.h5 >/dev/null
evil='m $(touch PWNED1) `touch PWNED2`; touch PWNED3 '"'"'q'"'"' "d" & x.h5'
mv plain.h5 "$evil"
outdir="out dir; \$(touch PWNED4)"
mkdir "$outdir"
common=(--pairs 2 --cores-per-node 2 --node-memory 4G --max-walltime 00:10:00)

# Names are refused before anything is written.
for bad in 'a b' 'x;touch PWNED1' '$(touch PWNED1)' '`touch PWNED2`' "it's" 'a"b' $'two\nlines' 'a|b' 'a&b'; do
  set +e
  one "$LODESTONE" plan "$evil" "${common[@]}" --scheduler slurm --job-name "$bad" --out refused.sh >out.txt 2>err.txt
  rc=$?
  set -e
  [ "$rc" -eq 2 ] || { cat err.txt; fail "job name '$bad': expected exit 2, got $rc"; }
  grep -qF -- "--job-name" err.txt || fail "job name '$bad': message does not name the option"
  grep -qF "letters, digits" err.txt || grep -qF "start with a letter" err.txt || fail "job name '$bad': unclear message"
done
for opt in --account --partition; do
  set +e
  one "$LODESTONE" plan "$evil" "${common[@]}" --scheduler slurm "$opt" 'x;$(touch PWNED1)' --out refused.sh >out.txt 2>err.txt
  rc=$?
  set -e
  [ "$rc" -eq 2 ] || fail "$opt: expected exit 2, got $rc"
  grep -qF -- "$opt" err.txt || fail "$opt: message does not name the option"
done
# A path with a newline is refused, and the message shows it visibly.
set +e
one "$LODESTONE" plan "$evil" "${common[@]}" --scheduler slurm --result $'r\n$(touch PWNED1).h5' --out refused.sh >out.txt 2>err.txt
rc=$?
set -e
[ "$rc" -eq 2 ] || fail "newline in --result: expected exit 2, got $rc"
grep -qF 'r\n$(touch PWNED1).h5' err.txt || { cat err.txt; fail "newline in --result: message does not show the value"; }
[ ! -e refused.sh ] || fail "a refused request wrote a script"
marker_check "while refusing"

# Paths are quoted. Stand-ins record what the scripts would run.
mkdir bin
cat > bin/mpirun <<'STUB'
#!/usr/bin/env bash
printf '%s\n' "$@" > "$STUB_DIR/mpirun.args"
if [ "${STUB_WAIT_FOR_USR1:-0}" = 1 ]; then
  trap 'echo usr1 > "$STUB_DIR/mpirun.usr1"; exit 3' USR1
  echo ready > "$STUB_DIR/mpirun.ready"
  for _ in $(seq 1 200); do sleep 0.05; done
  exit 99
fi
exit "${STUB_STATUS:-0}"
STUB
# Stand-ins for the core count the local script reads: STUB_NPROC CPUs usable and
# STUB_CORES physical cores (each "fail" for a command that does not answer).
cat > bin/nproc <<'STUB'
#!/usr/bin/env bash
[ "${STUB_NPROC:-64}" != fail ] || exit 1
echo "${STUB_NPROC:-64}"
STUB
cat > bin/lscpu <<'STUB'
#!/usr/bin/env bash
[ "${STUB_CORES:-64}" != fail ] || exit 1
echo '# Core,Socket'
for ((c = 0; c < ${STUB_CORES:-64}; c++)); do echo "$c,0"; echo "$c,0"; done  # two threads per core
STUB
for cmd in scontrol qsub; do
  printf '#!/usr/bin/env bash\nprintf "%%s\\n" "$@" > "$STUB_DIR/%s.args"\necho 4242.server\n' "$cmd" > "bin/$cmd"
done
chmod +x bin/*
export STUB_DIR="$work"
export SLURM_JOB_ID=77 PBS_JOBID=88.server PBS_O_WORKDIR="$work"

for s in slurm pbs local; do
  script="$outdir/job \$(touch PWNED1).$s"
  one "$LODESTONE" plan "$evil" "${common[@]}" --scheduler "$s" --job-name evil-test --out "$script" \
    --checkpoint "ck \`touch PWNED2\`.h5" --result "res; touch PWNED3.h5" --lodestone "$work/lode stone" >/dev/null
  bash -n "$script" || fail "bash -n $s"
  shellcheck -s bash "$script" || fail "shellcheck $s"
  marker_check "after writing the $s script"

  # Status 0: finished, nothing resubmitted.
  rm -f ./*.args
  set +e
  STUB_STATUS=0 PATH="$work/bin:$PATH" timeout 30 bash "$script" >run.out 2>&1
  rc=$?
  set -e
  [ "$rc" -eq 0 ] || { cat run.out; fail "$s status 0: script exited $rc"; }
  marker_check "running the $s script"
  grep -qxF -- "$evil" mpirun.args || { cat mpirun.args; fail "$s: matrix path did not arrive intact"; }
  grep -qxF -- "ck \`touch PWNED2\`.h5" mpirun.args || fail "$s: checkpoint path did not arrive intact"
  grep -qxF -- "res; touch PWNED3.h5" mpirun.args || fail "$s: result path did not arrive intact"
  grep -qxF -- "$work/lode stone" mpirun.args || fail "$s: lodestone path did not arrive intact"
  grep -qxF -- "--resume" mpirun.args || fail "$s: no --resume"
  if [ -e scontrol.args ] || [ -e qsub.args ]; then fail "$s status 0: something was resubmitted"; fi

  # Status 3: requeue (Slurm) or chain the next job (PBS); local asks to run again.
  set +e
  STUB_STATUS=3 PATH="$work/bin:$PATH" timeout 30 bash "$script" >run.out 2>&1
  rc=$?
  set -e
  marker_check "running the $s script with status 3"
  case "$s" in
    slurm)
      [ "$rc" -eq 0 ] || fail "slurm status 3: exit $rc"
      [ "$(tr '\n' ' ' < scontrol.args)" = "requeue 77 " ] || fail "slurm status 3: scontrol got $(cat scontrol.args)" ;;
    pbs)
      [ "$rc" -eq 0 ] || { cat run.out; fail "pbs status 3: exit $rc"; }
      [ "$(tr '\n' '|' < qsub.args)" = "-W|depend=afterany:88.server|-v|LODESTONE_CHAIN=2|$script|" ] ||
        fail "pbs status 3: qsub got $(cat qsub.args)" ;;
    local)
      [ "$rc" -eq 3 ] || fail "local status 3: exit $rc"
      grep -qF "run this script again" run.out || fail "local status 3: no advice" ;;
  esac

  # Status 1: stop and say why; nothing resubmitted.
  rm -f scontrol.args qsub.args
  set +e
  STUB_STATUS=1 PATH="$work/bin:$PATH" timeout 30 bash "$script" >run.out 2>&1
  rc=$?
  set -e
  [ "$rc" -eq 1 ] || fail "$s status 1: exit $rc"
  grep -qF "Not resubmitting" run.out || fail "$s status 1: no explanation"
  if [ -e scontrol.args ] || [ -e qsub.args ]; then fail "$s status 1: something was resubmitted"; fi
done

# A warning signal reaches the solver: USR1 to the Slurm batch shell is passed on as USR1.
rm -f mpirun.ready mpirun.usr1 scontrol.args
script="$outdir/job \$(touch PWNED1).slurm"
# (No timeout wrapper here: the signal must reach bash itself; the stand-in ends by itself within 10 s.)
STUB_WAIT_FOR_USR1=1 PATH="$work/bin:$PATH" bash "$script" >run.out 2>&1 &
pid=$!
for _ in $(seq 1 100); do [ -e mpirun.ready ] && break; sleep 0.05; done
[ -e mpirun.ready ] || fail "the stand-in solver did not start"
kill -USR1 "$pid"
set +e
wait "$pid"
rc=$?
set -e
[ -e mpirun.usr1 ] || { cat run.out; fail "USR1 was not forwarded to the solver"; }
[ "$rc" -eq 0 ] || { cat run.out; fail "after USR1: exit $rc"; }
[ "$(tr '\n' ' ' < scontrol.args)" = "requeue 77 " ] || fail "after USR1: no requeue"
grep -qF "USR1 received" run.out || fail "after USR1: the log does not say so"

# The local script oversubscribes only when the planned ranks exceed the cores it
# finds: CPUs it may use (nproc) or physical cores (lscpu), whichever is fewer.
script="$outdir/job \$(touch PWNED1).local"
ranks="$(sed -n 's/^ranks=//p' "$script")"
[ "$ranks" -ge 2 ] || fail "the local plan has $ranks ranks; the cases below need 2 or more"
for case in "64 64 no" "$ranks $ranks no" "$((ranks - 1)) 64 yes" "64 $((ranks - 1)) yes" "fail $((ranks - 1)) yes" \
  "$((ranks - 1)) fail yes" "fail fail no"; do
  read -r nproc cores want <<<"$case"
  rm -f mpirun.args
  set +e
  STUB_NPROC="$nproc" STUB_CORES="$cores" STUB_STATUS=0 PATH="$work/bin:$PATH" timeout 30 bash "$script" >run.out 2>&1
  rc=$?
  set -e
  [ "$rc" -eq 0 ] || { cat run.out; fail "local script with nproc $nproc, $cores cores: exit $rc"; }
  got=no
  if grep -qxF -- --oversubscribe mpirun.args; then got=yes; fi
  [ "$got" = "$want" ] || { cat run.out mpirun.args; fail "nproc $nproc, $cores cores, $ranks ranks: --oversubscribe $got, expected $want"; }
  if [ "$want" = yes ]; then
    grep -qF "the plan has $ranks ranks and this machine $((ranks - 1)) cores" run.out || { cat run.out; fail "no note on oversubscribing"; }
  elif grep -qF -- "--oversubscribe" run.out; then
    cat run.out; fail "nproc $nproc, $cores cores: a note on oversubscribing without it"
  fi
done
marker_check "at the end"
echo "plan_hostile: ok"

#!/usr/bin/env bash
# Every subcommand's --help exits 0, prints its usage, its examples and every
# option it takes (the options below are the documented ones, README "Commands").
set -euo pipefail
declare -A options=(
  [import]="--group"
  [generate]="--n --nx --ny --degree --damping --spectrum --ratio --dim --seed --group"
  [inspect]="--group --check --symmetry-tolerance"
  [solve]="--pairs --out --select --method --tol --max-matvecs --seed --group --shift --block-size --checkpoint --checkpoint-every --resume --time-budget --quiet"
  [verify]="--group"
  [calibrate]="--pairs --out --matvecs --method --block-size --tol --seed --group"
  [plan]="--pairs --scheduler --cores-per-node --node-memory --max-walltime --nodes --max-nodes --ranks-per-node --method --block-size --select --tol --seed --shift --ghost-rows --group --calibration --out --job-name --account --partition --result --checkpoint --lodestone"
)
out=$("$LODESTONE" --help)
for cmd in "${!options[@]}"; do
  grep -q "^  $cmd " <<<"$out" || { echo "lodestone --help does not list '$cmd'"; exit 1; }
  help=$("$LODESTONE" "$cmd" --help)
  grep -q "^Usage: lodestone $cmd " <<<"$help" || { echo "$cmd --help: no usage line"; exit 1; }
  grep -q "^Examples:" <<<"$help" || { echo "$cmd --help: no examples"; exit 1; }
  for opt in ${options[$cmd]}; do
    grep -Eq -- "(^|[ ,])$opt( |=|$)" <<<"$help" || { echo "$cmd --help does not list $opt"; exit 1; }
  done
  echo "$cmd: usage, examples and ${options[$cmd]// /, } listed"
done

# Runs README walkthroughs exactly as written, so their commands cannot rot.
# Sourced by tests/cli/readme_walkthrough*.sh (this file is not a test itself).
#
# A walkthrough is README's text from a line starting "**TITLE" to the next bold
# title or heading. Its ```sh blocks run in bash -euo pipefail and its ```python
# blocks in python3, in order, as one script, in a fresh directory laid out like
# a user's checkout with a build:
#   build/src/lodestone   the binary under test        scripts/   this tree's scripts
# and with PATH holding:
#   lodestone   the binary under test
#   python3     Debian's /usr/bin/python3 (numpy, scipy, h5py)
#   mpirun      the real one under `timeout`, so a hang fails; it runs as root and
#               oversubscribed through OpenMPI's own environment variables
#   sbatch      a stand-in: no Slurm is started; it checks the script with bash -n,
#               records the submission in $WT_SUBMITTED and prints what sbatch would
# After walkthrough_run the caller checks what the walkthrough left in $WT_WORK and
# printed to $WT_LOG.
: "${LODESTONE:?path to the lodestone binary}"
: "${LODESTONE_SOURCE:?source tree}"

WT_TMP="$(mktemp -d)"
trap 'rm -rf "$WT_TMP"' EXIT
WT_WORK="$WT_TMP/work"
WT_LOG="$WT_TMP/walkthrough.log"
WT_SUBMITTED="$WT_TMP/submitted"
mkdir -p "$WT_WORK/build/src" "$WT_TMP/bin"
ln -s "$LODESTONE" "$WT_WORK/build/src/lodestone"
ln -s "$LODESTONE_SOURCE/scripts" "$WT_WORK/scripts"
ln -s "$LODESTONE" "$WT_TMP/bin/lodestone"
ln -s /usr/bin/python3 "$WT_TMP/bin/python3"
real_mpirun="$(command -v mpirun)"
cat >"$WT_TMP/bin/mpirun" <<EOF
#!/bin/bash
exec timeout 300 "$real_mpirun" "\$@"
EOF
cat >"$WT_TMP/bin/sbatch" <<'EOF'
#!/bin/bash
# Stand-in for Slurm's sbatch in the README walkthrough tests: runs nothing.
script="${*: -1}"
[ -f "$script" ] || { echo "sbatch (stand-in): no script '$script'" >&2; exit 1; }
bash -n "$script" || exit 1
grep -q '^#SBATCH ' "$script" || { echo "sbatch (stand-in): '$script' has no #SBATCH lines" >&2; exit 1; }
echo "$*" >>"$WT_SUBMITTED"
echo "Submitted batch job 1 (stand-in: checked with bash -n, not run)"
EOF
chmod +x "$WT_TMP/bin/mpirun" "$WT_TMP/bin/sbatch"
export WT_SUBMITTED
export PATH="$WT_TMP/bin:$PATH"
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 OMPI_MCA_rmaps_base_oversubscribe=1
export MPLCONFIGDIR="$WT_TMP/matplotlib"

# walkthrough_script TITLE: the walkthrough's blocks as one bash script.
walkthrough_script() {
  awk -v title="**$1" '
    !on && index($0, title) == 1 { on = 1; next }
    !on { next }
    !blk && /^```sh$/ { blk = "sh"; next }
    !blk && /^```python$/ { blk = "py"; print "python3 - <<'"'"'PYTHON_BLOCK'"'"'"; next }
    blk && /^```$/ { if (blk == "py") print "PYTHON_BLOCK"; blk = ""; next }
    blk { print; next }
    /^\*\*/ || /^#/ { exit }
  ' "$LODESTONE_SOURCE/README.md"
}

# walkthrough_run TITLE: runs it in $WT_WORK; output to stdout and $WT_LOG.
walkthrough_run() {
  local script
  script="$(walkthrough_script "$1")"
  if [ -z "$script" ]; then
    echo "FAIL: README has no walkthrough '**$1' with a sh or python block" >&2
    return 1
  fi
  printf '== README walkthrough "%s":\n%s\n== running it\n' "$1" "$script"
  (cd "$WT_WORK" && timeout 600 bash -euo pipefail -c "$script") 2>&1 | tee "$WT_LOG"
}

wt_fail() { echo "FAIL: $*" >&2; exit 1; }

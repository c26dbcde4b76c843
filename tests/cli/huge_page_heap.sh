#!/usr/bin/env bash
# `lodestone` (the launcher) starts lodestone-core with the C library's heap on
# transparent huge pages (GLIBC_TUNABLES=glibc.malloc.hugetlb=1), under mpirun as well,
# and `--version` says which heap it runs on; lodestone-core started alone restarts
# itself once with the setting (include/lodestone/runtime.hpp). Turned off by
# LODESTONE_LARGE_PAGES=off; a glibc.malloc.hugetlb the user set stands (and is
# reported for what it is: 0 ordinary, 2 hugetlbfs pages, the last one given); other
# settings in GLIBC_TUNABLES are kept beside it; a running solve holds huge pages;
# a solve after the restart gives the same eigenvalues as one without it.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"

on="memory: C heap on transparent huge pages (GLIBC_TUNABLES=glibc.malloc.hugetlb=1)"
[ "$(env -u GLIBC_TUNABLES -u LODESTONE_LARGE_PAGES "$LODESTONE" --version | sed -n 2p)" = "$on" ] ||
  fail "the default run is not on huge pages"
[ "$(LODESTONE_LARGE_PAGES=off "$LODESTONE" --version | sed -n 2p)" = "memory: C heap on ordinary pages" ] ||
  fail "LODESTONE_LARGE_PAGES=off did not turn the restart off"
[ "$(GLIBC_TUNABLES=glibc.malloc.hugetlb=0 "$LODESTONE" --version | sed -n 2p)" = "memory: C heap on ordinary pages" ] ||
  fail "the user's own glibc.malloc.hugetlb=0 was overridden"
[ "$(GLIBC_TUNABLES=glibc.malloc.hugetlb=2 "$LODESTONE" --version | sed -n 2p)" = \
  "memory: C heap on huge pages reserved in hugetlbfs (GLIBC_TUNABLES=glibc.malloc.hugetlb=2)" ] ||
  fail "the user's own glibc.malloc.hugetlb=2 was not reported as such"
[ "$(GLIBC_TUNABLES=glibc.malloc.hugetlb=1:glibc.malloc.hugetlb=0 "$LODESTONE" --version | sed -n 2p)" = \
  "memory: C heap on ordinary pages" ] || fail "the last glibc.malloc.hugetlb in the list was not the one reported"
[ "$(GLIBC_TUNABLES=glibc.malloc.tcache_count=0 "$LODESTONE" --version | sed -n 2p)" = \
  "memory: C heap on transparent huge pages (GLIBC_TUNABLES=glibc.malloc.tcache_count=0:glibc.malloc.hugetlb=1)" ] ||
  fail "another setting in GLIBC_TUNABLES was not kept"
[ "$(unset GLIBC_TUNABLES; run 2 "$LODESTONE" --version | sed -n 2p)" = "$on" ] ||
  fail "under mpirun the restart did not happen"
# Started without the launcher, the command restarts itself with the setting.
core="$(dirname "$(readlink -f "$LODESTONE")")/lodestone-core"
[ -x "$core" ] || fail "no lodestone-core beside $LODESTONE"
[ "$(unset GLIBC_TUNABLES LODESTONE_LARGE_PAGES; "$core" --version | sed -n 2p)" = "$on" ] ||
  fail "lodestone-core started alone did not restart on huge pages"
[ "$(LODESTONE_LARGE_PAGES=off "$core" --version | sed -n 2p)" = "memory: C heap on ordinary pages" ] ||
  fail "lodestone-core: LODESTONE_LARGE_PAGES=off did not turn the restart off"

# A running solve holds huge pages, where the kernel gives them on request
# ("[madvise]" or "[always]" in its transparent huge page setting).
run 1 "$LODESTONE" generate laplace2d --nx 300 --ny 300 "$work/a.h5" >/dev/null
if grep -q '\[madvise\]\|\[always\]' /sys/kernel/mm/transparent_hugepage/enabled 2>/dev/null; then
  (unset GLIBC_TUNABLES LODESTONE_LARGE_PAGES; exec "$LODESTONE" solve "$work/a.h5" --pairs 4 --select largest \
    --method power --max-matvecs 1000000 --quiet --out "$work/slow.h5" >/dev/null 2>&1) &
  bg=$!
  huge=0
  for _ in $(seq 1 100); do
    sleep 0.1
    huge="$(awk '/^AnonHugePages:/ { print $2 }' "/proc/$bg/smaps_rollup" 2>/dev/null || echo 0)"
    [ "${huge:-0}" -gt 0 ] && break
  done
  kill "$bg" 2>/dev/null || true
  wait "$bg" 2>/dev/null || true
  [ "${huge:-0}" -gt 0 ] || fail "a running solve holds no huge pages"
fi

# The same eigenvalues with and without the restart.
for mode in on off; do
  LODESTONE_LARGE_PAGES=$mode run 2 -x LODESTONE_LARGE_PAGES "$LODESTONE" solve "$work/a.h5" --pairs 4 \
    --select largest --seed 3 --quiet --out "$work/$mode.h5" >/dev/null
done
"$PY" - "$work/on.h5" "$work/off.h5" <<'PY'
import sys, h5py
a, b = (h5py.File(f, "r")["eigenvalues"][...] for f in sys.argv[1:])
assert len(a) == 4 and abs(a - b).max() <= 1e-12 * abs(a).max(), (a, b)
PY
echo "ok: started on huge pages, under mpirun too; off and the user's own setting respected; same eigenvalues"

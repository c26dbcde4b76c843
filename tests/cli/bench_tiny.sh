#!/usr/bin/env bash
# The benchmark suite runs end to end on tiny cases against the already-built
# binary (scripts/bench --tiny --build): the table, table.csv and results.json
# hold one row per case and contender, the targets are reported, the checkpoint
# probe measured something, the kernel/triad pairs and the solve's segments (which
# the product-phase verdicts come from) add up, and the suite's own
# references agree with what Lodestone found on the Laplacian (closed form) and
# the dense case (prescribed spectrum). No timing is asserted.
set -euo pipefail
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
fail() { echo "FAIL: $*" >&2; exit 1; }

timeout 540 "$LODESTONE_SOURCE/scripts/bench" --tiny --no-micro --build "$LODESTONE_BUILD" --lodestone "$LODESTONE" \
  --out "$tmp/out" >"$tmp/table.txt" 2>"$tmp/err" || { cat "$tmp/table.txt" "$tmp/err" >&2; fail "scripts/bench --tiny failed"; }

grep -q "tiny, median of 1" "$tmp/table.txt" || fail "no tiny-mode header"
grep -q "^machine: .* cores" "$tmp/table.txt" || fail "no machine line"
grep -q "^versions: lodestone .*PETSc .*SciPy .*OpenMPI" "$tmp/table.txt" || fail "no versions line"
grep -q "^start-up: memory: C heap on .*; mpi: " "$tmp/table.txt" || fail "no start-up line (heap, MPI messaging layer)"
grep -q "^triad: 1 core" "$tmp/table.txt" || fail "no triad anchor"
grep -q "^targets (issue 6):" "$tmp/table.txt" || fail "no targets section"
grep -Eq "^  (PASS|MISS) +\(a\) auto P=2" "$tmp/table.txt" || fail "no verdict for the case (a) target"
grep -q "checkpoint (issue 4)" "$tmp/table.txt" || fail "no checkpoint section"
grep -Eq "^  (PASS|MISS) +\(a\) product phase .*P=1: .*the kernel alone in turn with the triad: [0-9]+% \(median of 3 pairs" \
  "$tmp/table.txt" || fail "no paired kernel/triad figure beside the 1-rank product verdict"

grep -Eq "^  (PASS|MISS) +\(b\) product phase .*P=2: [0-9]+% of the triad read between its segments \(median of [0-9]+ segment" \
  "$tmp/table.txt" || fail "no verdict from the solve in segments"

/usr/bin/python3 - "$tmp/out" <<'PY' || fail "CSV/JSON content"
import csv, json, sys
out = sys.argv[1]
rows = list(csv.DictReader(open(f"{out}/table.csv")))
doc = json.load(open(f"{out}/results.json"))
assert len(rows) == len(doc["rows"]), "CSV and JSON disagree"
def have(case, contender, ranks):
    return [r for r in rows if r["case"] == case and r["contender"] == contender and r["ranks"] == str(ranks)]
for case in "abcd":
    for method in ("power", "block", "chebyshev", "krylov", "auto"):
        for p in (1, 2):
            assert len(have(case, f"lodestone {method}", p)) == 1, (case, method, p)
assert have("a", "scipy eigsh", 1) and have("c", "scipy eigs", 1) and have("d", "lapacke dsyevr", 1)
# Chebyshev is symmetric-only: the walk row says why it did not run.
assert "symmetric" in have("c", "lodestone chebyshev", 1)[0]["note"]
# The suite's references against Lodestone's converged answers: the 2-D Laplacian's closed
# form (case a, b) and the prescribed spectrum n..1 (case d). The walk's subdominant eigenvalues
# lie close together on a circle, so its rows only have to be filled in.
for case, tol in (("a", 1e-6), ("b", 1e-6), ("d", 1e-6)):
    r = have(case, "lodestone auto", 2)[0]
    assert r["converged"].split("/")[0] == r["converged"].split("/")[1], (case, r)
    assert float(r["max_eig_error"]) < tol, (case, r["max_eig_error"])
    assert float(r["max_rel_residual"]) <= 1e-8, (case, r["max_rel_residual"])
    assert float(r["peak_rss_mib_per_rank"]) > 1 and float(r["plan_mib_per_rank"]) > 1, (case, r)
    assert float(r["matvecs"]) > 0 and float(r["wall_vs_ref"]) > 0
# Every product of a run is counted, in whichever -log_view stage it ran (set-up, iterations,
# extraction): no product multiplies more columns than the widest block here (K + K/2 = 15).
for r in rows:
    if r["contender"].startswith("lodestone") and r.get("product_calls"):
        assert float(r["matvecs"]) <= 16 * float(r["product_calls"]), ("products not all counted", r)
# Each Lodestone row's product is set against the highest of three triad readings: at the
# start, just before and just after its runs.
for r in rows:
    if r["contender"].startswith("lodestone") and r.get("product_of_triad"):
        readings = [float(x) for x in r["triad_readings"].split(" / ")]
        assert len(readings) == 3 and abs(float(r["triad_gbs"]) - max(readings)) <= 0.051, r
        assert abs(float(r["product_of_triad"]) * float(r["triad_gbs"]) / float(r["product_gbs"]) - 1) < 1e-9, r
        # ... and beside it the fraction of the lowest reading, never smaller.
        lowest = min(x for x in readings if x > 0)
        assert float(r["product_of_lowest_triad"]) >= float(r["product_of_triad"]), r
        # The readings are printed to 0.1 GB/s: a low one (a busy machine) is that much less exact.
        assert abs(float(r["product_of_lowest_triad"]) * lowest / float(r["product_gbs"]) - 1) < 0.01 + 0.051 / lowest, r
# The slowest rank's product time over the fastest's, from -log_view's max/min ratio: at least 1.
for r in rows:
    if r["contender"].startswith("lodestone") and r.get("product_calls") and r["ranks"] == "2":
        assert 1.0 <= float(r["product_rank_spread"]) < 100, ("rank spread", r)
walk = have("c", "lodestone auto", 2)[0]
assert walk["matvecs"] and (walk["converged"] == "4/4" or "did not converge" in walk["note"]), walk
# The filter's kernel and the triad in turn (bench_paired) on each Laplacian: every kernel slice
# is set against the mean of the triad slices on either side of it.
for case in "ab":
    pk = doc["paired_kernel"][case]
    k, t = pk["kernel_gbs"], pk["triad_gbs"]
    assert pk["rounds"] == len(k) == 3 and len(t) == 4 and min(k + t) > 0, pk
    ratios = sorted(k[i] / (0.5 * (t[i] + t[i + 1])) for i in range(3))
    assert abs(pk["paired_median"] / ratios[1] - 1) < 1e-3, (ratios, pk)
    assert abs(pk["paired_min"] / ratios[0] - 1) < 1e-3 and abs(pk["paired_max"] / ratios[2] - 1) < 1e-3, pk
    assert abs(pk["triad_best_gbs"] - max(t)) < 1e-3 and abs(pk["kernel_best_gbs"] - max(k)) < 1e-3, pk
# The product-phase verdicts come from the `auto` solve run again in segments, resumed from its
# checkpoint: each segment against the mean of the triad readings on either side of it (one
# reading before the first segment, one after each), the verdict on their median.
for case in "ab":
    for p in (1, 2):
        sg = doc["segmented"][f"{case}/{p}"]
        segs = sg["segments"]
        assert segs and sum(s["matvecs"] for s in segs) == sg["matvecs"] > 0, sg
        for prev, s in zip(segs, segs[1:]):
            assert s["triad_before"] == prev["triad_after"], ("readings not shared between segments", segs)
        fractions = sorted(s["gbs"] / (0.5 * (s["triad_before"] + s["triad_after"])) for s in segs if "of_triad" in s)
        assert len(fractions) == sg["counted"] > 0, sg
        mid = len(fractions) // 2
        median = fractions[mid] if len(fractions) % 2 else 0.5 * (fractions[mid - 1] + fractions[mid])
        assert abs(sg["median"] / median - 1) < 1e-9 and sg["min"] == fractions[0] and sg["max"] == fractions[-1], sg
        # The segments' solve, resumed however often, ends at the closed-form eigenvalues.
        assert sg["max_eig_error"] < 1e-6, sg
        verdict = [t for t in doc["targets"] if t["target"] == f"({case}) product phase >= 80% of triad, P={p}"]
        assert len(verdict) == 1 and verdict[0]["verdict"] == ("PASS" if sg["median"] >= 0.8 else "MISS"), verdict
assert doc["triad_gbs"], "no triad figure"
assert any(t["verdict"] in ("PASS", "MISS") for t in doc["targets"])
ck = doc["checkpoints"]
assert ck and all(c["bytes"] >= c["minimum_bytes"] > 0 for c in ck), ck
assert doc["machine"]["cores"] >= 1 and doc["machine"]["petsc"]
PY
echo "bench tiny: ok"

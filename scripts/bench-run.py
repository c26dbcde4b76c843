#!/usr/bin/python3
"""The benchmark suite's driver (started by scripts/bench, which builds first).

Generates the cases of docs/benchmarks.md with `lodestone generate`, measures the
anchors (STREAM-style triad at 1 and all cores; `dd` with fsync; on the Laplacians
the filter's kernel and the triad in turn on one core, bench_paired), runs every
contender in turn (Lodestone's methods at 1 and 2 ranks, SciPy eigsh/eigs,
LAPACKE dsyevr; on the Laplacians `auto` once more in segments with the triad read
between them, which the product-phase verdicts come from), takes the median of
--repeat runs, prints one table with the targets as PASS/MISS and writes table.csv,
results.json and the raw logs under results/bench/<UTC timestamp>/. Run under
Debian's /usr/bin/python3."""
import argparse
import csv
import datetime
import json
import math
import os
import re
import shutil
import statistics
import subprocess
import sys
import time

import h5py
import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
MPIRUN = ["mpirun", "--allow-run-as-root", "--oversubscribe"]
RUN_TIMEOUT = 600  # seconds: a run longer than this is stopped and reported as such
INDEX_BYTES = 4    # PetscInt in the default (32-bit index) PETSc build


# ---- the cases (issue 6); tiny sizes for the test suite ------------------------------------
def cases(tiny):
    return {
        "a": dict(kind="laplace2d", gen=["--nx", "40", "--ny", "29"] if tiny else ["--nx", "400", "--ny", "290"],
                  pairs=8, select="largest", tol=1e-8, cap=400 if tiny else 5000, cap_filter=20000 if tiny else 100000,
                  title="laplace2d, K=8 largest"),
        "b": dict(kind="laplace2d", gen=["--nx", "60", "--ny", "45"] if tiny else ["--nx", "2000", "--ny", "1500"],
                  pairs=8, select="largest", tol=1e-8, cap=400 if tiny else 1000, cap_filter=20000 if tiny else 200000,
                  title="laplace2d, K=8 largest"),
        "c": dict(kind="walk", gen=["--n", "3000" if tiny else "2000000", "--degree", "8", "--communities", "4",
                                    "--mixing", "0.1", "--seed", "1"],
                  pairs=4, select="magnitude", tol=1e-8, cap=400 if tiny else 3000, cap_filter=20000 if tiny else 20000,
                  title="walk, mean out-degree 8, 4 communities, K=4 by magnitude"),
        "d": dict(kind="dense-spectrum", gen=["--n", "200" if tiny else "6000", "--spectrum", "linear", "--seed", "1"],
                  pairs=10, select="largest", tol=1e-8, cap=400 if tiny else 2000, cap_filter=20000 if tiny else 50000,
                  title="dense-spectrum linear (eigenvalues n..1), K=10 largest"),
    }


def sh(cmd, **kw):
    return subprocess.run(cmd, capture_output=True, text=True, **kw)


def machine_and_versions(lodestone):
    info = {}
    cpu = "unknown"
    try:
        for line in open("/proc/cpuinfo"):
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    info["cpu"] = cpu
    info["cores"] = os.cpu_count()
    mem = 0
    for line in open("/proc/meminfo"):
        if line.startswith("MemTotal"):
            mem = int(line.split()[1]) * 1024
    info["memory_gib"] = round(mem / 2**30, 1)
    info["load_average_at_start"] = os.getloadavg()[0]
    git = sh(["git", "-C", ROOT, "rev-parse", "--short=12", "HEAD"]).stdout.strip()
    dirty = sh(["git", "-C", ROOT, "status", "--porcelain", "--untracked-files=no"]).stdout.strip()
    info["lodestone"] = git + ("+local changes" if dirty else "")
    info["petsc"] = sh(["pkg-config", "--modversion", "petsc"]).stdout.strip()
    import scipy
    info["scipy"] = scipy.__version__
    info["numpy"] = np.__version__
    m = re.search(r"(\d+\.\d+\.\d+)", sh(["mpirun", "--version"]).stdout)
    info["openmpi"] = m.group(1) if m else "unknown"
    info["python"] = sys.version.split()[0]
    # How the command starts here, as its runs will (heap pages, MPI messaging layer).
    lines = sh(MPIRUN + ["-n", "1", lodestone, "--version"]).stdout.splitlines()
    info["lodestone_start"] = "; ".join(line.strip() for line in lines[1:]) or "unknown"
    return info


# ---- references ---------------------------------------------------------------------------
def laplace2d_reference(nx, ny, k):
    # Closed form of the 5-point Dirichlet Laplacian on an nx x ny grid: the Kronecker sum of the
    # 1-D finite-difference result 2 - 2 cos(j pi/(n+1)) (standard result; the same check as
    # tests/cli/solve_laplace.sh): lambda_ij = 4 - 2 cos(i pi/(nx+1)) - 2 cos(j pi/(ny+1)).
    cx = 2 - 2 * np.cos(np.arange(1, nx + 1) * np.pi / (nx + 1))
    cy = 2 - 2 * np.cos(np.arange(1, ny + 1) * np.pi / (ny + 1))
    top_x = np.sort(cx)[::-1][:k]
    top_y = np.sort(cy)[::-1][:k]
    return sorted((x + y for x in top_x for y in top_y), reverse=True)[:k]


def reference(case, scipy_run):
    """Reference eigenvalues (complex) and where they come from."""
    g = case["gen"]
    if case["kind"] == "laplace2d":
        nx, ny = int(g[g.index("--nx") + 1]), int(g[g.index("--ny") + 1])
        return [complex(v) for v in laplace2d_reference(nx, ny, case["pairs"])], "closed form"
    if case["kind"] == "dense-spectrum":
        # The prescribed spectrum of `generate dense-spectrum --spectrum linear`: n, n-1, ..., 1.
        n = int(g[g.index("--n") + 1])
        return [complex(n - j) for j in range(case["pairs"])], "prescribed spectrum"
    if scipy_run and scipy_run.get("eigenvalues_re"):
        return [complex(r, i) for r, i in zip(scipy_run["eigenvalues_re"], scipy_run["eigenvalues_im"])], "SciPy eigs"
    return [complex(1.0)], "lambda = 1 only (column-stochastic); SciPy did not run"


def max_error(values, ref):
    if not values or not ref:
        return None
    # Each reference value against the closest computed one.
    return max(min(abs(r - v) for v in values) for r in ref)


# ---- runners --------------------------------------------------------------------------------
def rss_prefix(tag):
    # Every rank under /usr/bin/time: peak resident set (KiB) into TAG.rss.RANK.
    return ["sh", "-c", 'exec /usr/bin/time -f %M -o "$0.rss.${OMPI_COMM_WORLD_RANK:-0}" "$@"', tag]


def read_rss(tag, ranks):
    out = []
    for r in range(ranks):
        try:
            out.append(int(open(f"{tag}.rss.{r}").read().split()[-1]) * 1024)
        except (OSError, ValueError, IndexError):
            pass
    return out


def first_error(stderr):
    # The program's own message, not mpirun's banner.
    lines = [l for l in stderr.splitlines() if l.strip() and not l.startswith(("---", "Primary job", "a non-zero",
                                                                                 "Per user", "mpirun", "process"))]
    return lines[0].strip()[:300] if lines else "(no message)"


def timed(cmd, timeout=RUN_TIMEOUT, env=None):
    t0 = time.perf_counter()
    try:
        p = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, env=env)
    except subprocess.TimeoutExpired:
        return None, time.perf_counter() - t0, "", ""
    return p.returncode, time.perf_counter() - t0, p.stdout, p.stderr


def parse_log_view(path):
    """Product-phase time (max over ranks) and call count from PETSc's -log_view text."""
    try:
        text = open(path).read()
    except OSError:
        return None
    events = {}
    for line in text.splitlines():
        parts = line.split()
        if len(parts) > 4 and parts[0] in ("MatMatMultNum", "MatProductNumeric", "MatMult", "MatMatMult",
                                           "MatProductSymbolic", "MatMatMultSym", "LdsDenseBlockProd",
                                           "LdsSparseBlockProd", "LdsSparseBlockUpd"):
            try:
                # count (max over ranks), time (max over ranks), and the fastest rank's time
                # (the max over the max/min ratio -log_view prints beside it), summed over the
                # stages the event appears in (Set up, Iterate, Extract pairs, ...; -log_view
                # prints one line per stage).
                count, seconds, fastest = events.get(parts[0], (0, 0.0, 0.0))
                ratio = float(parts[4])
                events[parts[0]] = (count + int(parts[1]), seconds + float(parts[3]),
                                    fastest + (float(parts[3]) / ratio if ratio > 0 else 0.0))
            except ValueError:
                pass
    # The numeric phase of the block product (PETSc 3.18 logs MatMatMult's as MatMatMultNum, or
    # MatProductNumeric in other versions), plus plain MatMult where single vectors are multiplied,
    # plus Lodestone's own dense product on more than one rank (LdsDenseBlockProd, algebra/operator.cpp)
    # and its own sparse product (LdsSparseBlockProd: Y = A X; LdsSparseBlockUpd: Y = a (A X - s X) + b Y,
    # which also reads the old Y; algebra/sparse_product.cpp).
    # The fastest rank's time beside the slowest rank's says how unevenly the ranks ran: on
    # rows split evenly, a spread well above 1 means a core shared with other work (or waits
    # for another rank's ghost values counted in the event), which the max-over-ranks time,
    # and so the product's fraction of the triad, carries in full. -log_view prints the ratio
    # to one decimal, and the fastest times of different stages may be different ranks', so
    # the spread is coarse (shown to one decimal) and never smaller than the truth.
    seconds = fastest = 0.0
    calls = 0
    for name in ("MatMatMultNum" if "MatMatMultNum" in events else "MatProductNumeric", "MatMult", "LdsDenseBlockProd",
                 "LdsSparseBlockProd", "LdsSparseBlockUpd"):
        if name in events:
            calls += events[name][0]
            seconds += events[name][1]
            fastest += events[name][2]
    updates = events.get("LdsSparseBlockUpd", (0, 0.0, 0.0))[0]
    return {"calls": calls, "update_calls": updates, "seconds": seconds,
            "rank_spread": seconds / fastest if fastest > 0 else None, "events": events}


def rank_spread_text(row, lead):
    """'<lead>slowest/fastest rank 1.2' for a run on more than one rank, else ''."""
    spread = row.get("product_rank_spread")
    return f"{lead}slowest/fastest rank {spread:.1f}" if row.get("ranks", 1) > 1 and spread else ""


def product_bytes(calls, matvecs, n, nnz, dense, update_calls=0):
    """Bytes the product phase moves (stated formula, docs/benchmarks.md):
    once per product call, whatever its block width: the matrix
      CSR: nnz x (8 B value + INDEX_BYTES column index) + (n + 1) x INDEX_BYTES row offsets
      dense: n x n x 8 B
    and once per vector (matvecs counts each column of a block): read x, write y = n x 16 B;
    a fused update (Y = a (A X - s X) + b Y, update_calls of the calls) also reads the old Y:
    n x 8 B per vector, its vectors taken as update_calls / calls of all (the calls of one
    solve have nearly one width). Halo (ghost) values exchanged between ranks are not counted."""
    matrix = n * n * 8.0 if dense else nnz * (8.0 + INDEX_BYTES) + (n + 1) * INDEX_BYTES
    update_vectors = matvecs * update_calls / calls if calls > 0 else 0.0
    return calls * matrix + matvecs * n * 16.0 + update_vectors * n * 8.0


def auto_method(symmetric):
    """The method `--method auto` resolves to (the rule in src/api/solver.cpp)."""
    return "chebyshev" if symmetric else "krylov"


def solve_command(b, case, path, method, ranks, cap, out, log, prefix=(), extra=()):
    """`lodestone solve` of the case under mpirun, with -log_view into `log`; `prefix` goes
    between mpirun and the program (a per-rank wrapper), `extra` after the solve's options."""
    return (["timeout", str(RUN_TIMEOUT + 30)] + MPIRUN + ["-n", str(ranks)] + list(prefix) +
            [b["lodestone"], "solve", path, "--pairs", str(case["pairs"]), "--select", case["select"],
             "--method", method, "--tol", str(case["tol"]), "--max-matvecs", str(cap), "--quiet",
             "--out", out] + list(extra) + ["--petsc", "-log_view", f":{log}"])


def run_lodestone(b, case, path, method, ranks, work, repeat, info):
    tag = os.path.join(work, f"{case['id']}-{method}-np{ranks}")
    # Power and block cannot converge on the clustered cases: a small cap; the filtered methods a large one
    # (auto on a non-symmetric matrix is krylov, and gets the small cap like power, block and krylov).
    cap = case["cap_filter"] if method == "chebyshev" or (method == "auto" and info["symmetric"]) else case["cap"]
    runs = []
    note = ""
    for r in range(repeat):
        out = f"{tag}.result.h5"
        log = f"{tag}.log_view.{r}.txt"
        for f in (out,):
            if os.path.exists(f):
                os.remove(f)
        cmd = solve_command(b, case, path, method, ranks, cap, out, log, prefix=rss_prefix(tag))
        rc, wall, so, se = timed(cmd, RUN_TIMEOUT + 60)
        if rc is None or rc == 124:
            note = f"stopped after {RUN_TIMEOUT} s"
            break
        if rc not in (0, 4):
            note = f"exit {rc}: {first_error(se)}"
            break
        with h5py.File(out, "r") as f:
            re_ = list(f["eigenvalues"][...])
            im_ = list(f["eigenvalues_imag"][...])
            res = list(f["residual_norms"][...])
            run = dict(wall=wall, solve_seconds=float(f.attrs["elapsed_seconds"]), matvecs=int(f.attrs["matvecs"]),
                       converged=int(f.attrs["converged"]), norm=float(f.attrs["norm_estimate"]),
                       values=[complex(x, y) for x, y in zip(re_, im_)], residuals=res,
                       rss=read_rss(tag, ranks), log=parse_log_view(log))
        runs.append(run)
        if rc == 4:
            note = f"did not converge within {cap} matvecs ({run['converged']} of {case['pairs']} pairs)"
            break  # a capped run is not repeated
    return runs, note


def median(xs):
    xs = [x for x in xs if x is not None]
    return statistics.median(xs) if xs else None


def summarize_lodestone(case, method, ranks, runs, note, ref, info, triad_readings):
    """triad_readings: the triad's GB/s at the suite's start, just before and just after the runs
    (None where not measured). The product phase is set against the highest (never flattered by a
    slow minute); its fraction of the lowest is kept beside it."""
    measured = [x for x in triad_readings if x]
    triad_gbs = max(measured) if measured else None
    row = dict(case=case["id"], contender=f"lodestone {method}", ranks=ranks, note=note, triad_gbs=triad_gbs,
               triad_readings=" / ".join(f"{x:.1f}" if x else "-" for x in triad_readings))
    if not runs:
        return row
    last = runs[-1]
    row["wall_s"] = median([r["wall"] for r in runs])
    row["solve_s"] = median([r["solve_seconds"] for r in runs])
    row["matvecs"] = last["matvecs"]
    conv = last["converged"]
    row["converged"] = f"{conv}/{case['pairs']}"
    row["max_rel_residual"] = max(last["residuals"]) / last["norm"] if last["residuals"] else None
    row["max_eig_error"] = max_error(last["values"][:case["pairs"]], ref)
    row["peak_rss_mib_per_rank"] = max(last["rss"]) / 2**20 if last["rss"] else None
    logs = [r["log"] for r in runs if r["log"] and r["log"]["calls"] > 0]
    if logs:
        t = median([l["seconds"] for l in logs])
        calls = logs[-1]["calls"]
        bytes_ = product_bytes(calls, last["matvecs"], info["rows"], info["nnz"], info["dense"],
                               logs[-1].get("update_calls", 0))
        row["product_s"] = t
        row["product_rank_spread"] = median([l["rank_spread"] for l in logs])
        row["product_calls"] = calls
        row["product_gbs"] = bytes_ / t / 1e9 if t > 0 else None
        if triad_gbs and row["product_gbs"]:
            row["product_of_triad"] = row["product_gbs"] / triad_gbs
            row["product_of_lowest_triad"] = row["product_gbs"] / min(measured)
    return row


def run_scipy(b, case, path, work, repeat):
    tag = os.path.join(work, f"{case['id']}-scipy")
    which = "LA" if case["select"] == "largest" else "LM"
    runs = []
    for r in range(repeat):
        out = f"{tag}.json"
        cmd = (["/usr/bin/time", "-f", "%M", "-o", f"{tag}.rss.0", "/usr/bin/python3",
                os.path.join(ROOT, "scripts", "bench-scipy.py"), path, "--pairs", str(case["pairs"]),
                "--which", which, "--tol", str(case["tol"]), "--out", out])
        rc, wall, so, se = timed(cmd)
        if rc is None:
            return runs, f"stopped after {RUN_TIMEOUT} s"
        if rc != 0:
            return runs, f"exit {rc}: {first_error(se)}"
        d = json.load(open(out))
        d["wall"] = wall
        d["rss"] = read_rss(tag, 1)
        runs.append(d)
    return runs, ""


def summarize_scipy(case, runs, note, ref):
    routine = runs[-1]["routine"] if runs else ("eigsh" if case["kind"] != "walk" else "eigs")
    row = dict(case=case["id"], contender=f"scipy {routine}", ranks=1, note=note)
    if not runs:
        return row
    last = runs[-1]
    row["wall_s"] = median([r["wall"] for r in runs])
    row["solve_s"] = median([r["seconds"] for r in runs])
    row["matvecs"] = last["matvecs"]
    row["converged"] = f"{len(last['residuals'])}/{case['pairs']}"
    row["max_rel_residual"] = max(last["residuals"]) / last["norm_estimate"]
    vals = [complex(x, y) for x, y in zip(last["eigenvalues_re"], last["eigenvalues_im"])]
    row["max_eig_error"] = max_error(vals, ref)
    row["peak_rss_mib_per_rank"] = max(last["rss"]) / 2**20 if last["rss"] else None
    return row


def run_dense_reference(b, case, path, work, repeat):
    tag = os.path.join(work, f"{case['id']}-dsyevr")
    runs = []
    for r in range(repeat):
        cmd = ["/usr/bin/time", "-f", "%M", "-o", f"{tag}.rss.0", b["dense_reference"], path, str(case["pairs"])]
        rc, wall, so, se = timed(cmd)
        if rc != 0:
            return runs, f"exit {rc}: {se.strip()}"
        d = json.loads(so)
        d["wall"] = wall
        d["rss"] = read_rss(tag, 1)
        runs.append(d)
    return runs, ""


def summarize_dense(case, runs, note, ref):
    row = dict(case=case["id"], contender="lapacke dsyevr", ranks=1, note=note)
    if not runs:
        return row
    last = runs[-1]
    row["wall_s"] = median([r["wall"] for r in runs])
    row["solve_s"] = median([r["seconds"] for r in runs])
    row["converged"] = f"{case['pairs']}/{case['pairs']}"
    norm = float(last["n"])  # ||A||_2 = n for the linear spectrum n..1
    row["max_rel_residual"] = max(last["residuals"]) / norm
    row["max_eig_error"] = max_error([complex(v) for v in last["eigenvalues"]], ref)
    row["peak_rss_mib_per_rank"] = max(last["rss"]) / 2**20 if last["rss"] else None
    return row


PLAN_CACHE = {}


def plan_memory(b, path, case, method, ranks):
    """The planner's per-rank memory model (peak, without the safety margin), in bytes."""
    key = (path, method, ranks)
    if key not in PLAN_CACHE:
        PLAN_CACHE[key] = plan_memory_uncached(b, path, case, method, ranks)
    return PLAN_CACHE[key]


def plan_memory_uncached(b, path, case, method, ranks):
    # plan reads only metadata and row offsets: one process is enough.
    cmd = [b["lodestone"], "plan", path, "--pairs", str(case["pairs"]), "--scheduler", "local",
                    "--cores-per-node", str(max(ranks, 1)), "--node-memory", "24G", "--nodes", "1",
                    "--ranks-per-node", str(ranks), "--method", method]
    rc, _, so, se = timed(["timeout", "120"] + cmd, 150)
    m = re.search(r"^\s*peak\s+([\d.]+)\s*(B|KiB|MiB|GiB|TiB)", so, re.M)
    if not m:
        return None
    mult = {"B": 1, "KiB": 2**10, "MiB": 2**20, "GiB": 2**30, "TiB": 2**40}[m.group(2)]
    return float(m.group(1)) * mult


def matrix_info(path):
    with h5py.File(path, "r") as f:
        g = f["matrix"]
        layout = g.attrs["layout"]
        layout = layout.decode() if isinstance(layout, bytes) else str(layout)
        n = int(g.attrs["rows"])
        nnz = n * n if layout == "dense" else int(g["row_offsets"][-1])
        return dict(rows=n, nnz=nnz, dense=layout == "dense", symmetric=bool(int(g.attrs.get("symmetric", 0))))


def triad_at(b, threads, tiny):
    """The triad's best pass on `threads` cores, GB/s (None if it failed)."""
    env = dict(os.environ, OMP_NUM_THREADS=str(threads), OMP_PROC_BIND="spread")
    args = ["--mib", "16", "--repeat", "3"] if tiny else ["--mib", "512", "--repeat", "10"]
    rc, _, so, se = timed([b["triad"]] + args, env=env)
    return json.loads(so)["best_gbs"] if rc == 0 else None


def paired_kernel(b, case, work, tiny):
    """The filter's step on 12 columns and the 1-core triad in turn on the case's grid
    (bench_paired): the kernel's fraction of the triad read in the same seconds, beside
    the product-phase verdicts, which do not use it. None if it failed."""
    args = case["gen"] + ["--dir", work] + (["--rounds", "3", "--slice", "0.02", "--mib", "16"] if tiny else [])
    # The C heap on huge pages for both kernels alike, as the lodestone launcher has it.
    env = dict(os.environ, OMP_NUM_THREADS="1", GLIBC_TUNABLES="glibc.malloc.hugetlb=1")
    rc, _, so, se = timed([b["paired"]] + args, env=env)
    return json.loads(so) if rc == 0 else None


SEGMENT_BUDGET = "40s"  # each segment of a solve in segments stops with a checkpoint within this (--time-budget)


def segmented_solve(b, case, path, ranks, cores, work, tiny, info, ref):
    """The case's `auto` solve again, in segments: each stops with a checkpoint within
    SEGMENT_BUDGET and the next resumes from it, and the triad is read on the same cores
    before the first segment and after each one. Every segment's product phase is set against
    the mean of the readings on either side of it, so that a product and its anchor are
    measured in the same minute on a host whose bandwidth drifts by a third within one.
    Returns a dict: the segments, the median and range of their fractions, the finished
    solve's matvecs and eigenvalue error; or, if it failed, only the reason ("note")."""
    tag = os.path.join(work, f"{case['id']}-auto-np{ranks}-segments")
    out, ck = f"{tag}.result.h5", f"{tag}.checkpoint.h5"
    for f in (out, ck, ck + ".previous"):
        if os.path.exists(f):
            os.remove(f)
    readings = [triad_at(b, cores, tiny)]
    segments, done, matvecs, stalled = [], False, 0, 0
    while not done and len(segments) < 60:
        log = f"{tag}.log_view.{len(segments)}.txt"
        cmd = solve_command(b, case, path, "auto", ranks, case["cap_filter"], out, log,
                            extra=["--checkpoint", ck, "--resume", "--time-budget", SEGMENT_BUDGET,
                                   "--checkpoint-every", "10h"])
        rc, wall, so, se = timed(cmd, RUN_TIMEOUT + 60)
        if rc == 3:
            m = re.search(r"after \d+ iterations and (\d+) matvecs", se)
            if not m:
                return dict(note=f"segment {len(segments) + 1}: no matvec count in its message")
            now = int(m.group(1))
        elif rc in (0, 4):
            with h5py.File(out, "r") as f:
                now = int(f.attrs["matvecs"])
                values = [complex(x, y) for x, y in zip(f["eigenvalues"][...], f["eigenvalues_imag"][...])]
            done = True
        else:
            return dict(note=f"segment {len(segments) + 1}: exit {rc}: {first_error(se)}")
        readings.append(triad_at(b, cores, tiny))
        lv = parse_log_view(log)
        stalled = stalled + 1 if now == matvecs else 0
        if stalled >= 2:
            return dict(note=f"segment {len(segments) + 1}: no progress in two segments")
        seg = dict(matvecs=now - matvecs, calls=lv["calls"] if lv else 0, update_calls=lv["update_calls"] if lv else 0,
                   seconds=lv["seconds"] if lv else 0.0, wall=wall, triad_before=readings[-2], triad_after=readings[-1])
        matvecs = now
        if seg["calls"] > 0 and seg["seconds"] > 0 and seg["triad_before"] and seg["triad_after"]:
            nbytes = product_bytes(seg["calls"], seg["matvecs"], info["rows"], info["nnz"], info["dense"],
                                   seg["update_calls"])
            seg["gbs"] = nbytes / seg["seconds"] / 1e9
            seg["of_triad"] = seg["gbs"] / (0.5 * (seg["triad_before"] + seg["triad_after"]))
        segments.append(seg)
    if not done:
        return dict(note="not finished in 60 segments")
    fractions = [s["of_triad"] for s in segments if "of_triad" in s]
    if not fractions:
        return dict(note="no segment with products and triad readings on both sides")
    return dict(segments=segments, budget=SEGMENT_BUDGET, matvecs=matvecs,
                max_eig_error=max_error(values[:case["pairs"]], ref), median=statistics.median(fractions),
                min=min(fractions), max=max(fractions), counted=len(fractions))


def segmented_text(sg):
    n = sg["counted"]
    return (f"{100 * sg['median']:.0f}% of the triad read between its segments (median of {n} "
            f"segment{'s' if n != 1 else ''} of at most {sg['budget']}, {100 * sg['min']:.0f}-{100 * sg['max']:.0f}%)")


def paired_text(pk):
    return (f"the kernel alone in turn with the triad: {100 * pk['paired_median']:.0f}% (median of "
            f"{pk['rounds']} pairs, {100 * pk['paired_min']:.0f}-{100 * pk['paired_max']:.0f}%)")


def triad_anchor(b, cores, tiny):
    return {t: v for t in sorted({1, cores}) if (v := triad_at(b, t, tiny))}


def dd_anchor(directory, nbytes):
    """Seconds for a plain sequential write of nbytes with fsync (dd conv=fsync), same disk."""
    target = os.path.join(directory, "dd-anchor.bin")
    bs = 1 << 20
    count = max(1, int(math.ceil(nbytes / bs)))
    t0 = time.perf_counter()
    p = sh(["dd", "if=/dev/zero", f"of={target}", f"bs={bs}", f"count={count}", "conv=fsync"])
    secs = time.perf_counter() - t0
    if os.path.exists(target):
        os.remove(target)
    return (count * bs) / secs if p.returncode == 0 else None


def checkpoint_probe(b, case, path, method, ranks, work, repeat):
    cmd = (["timeout", "600"] + MPIRUN + ["-n", str(ranks), b["checkpoint"], path, "--pairs", str(case["pairs"]),
            "--method", method, "--select", case["select"], "--steps", "2", "--repeat", str(max(repeat, 3)),
            "--out", work])
    rc, _, so, se = timed(cmd, 660)
    if rc != 0:
        return None
    d = json.loads(so.strip().splitlines()[-1])
    d["write_bandwidth"] = d["bytes"] / d["seconds"] if d["seconds"] > 0 else None
    d["dd_bandwidth"] = dd_anchor(work, d["bytes"])
    return d


# ---- output -------------------------------------------------------------------------------
COLUMNS = [("case", "case"), ("contender", "contender"), ("ranks", "P"), ("wall_s", "wall s"),
           ("matvecs", "matvecs"), ("converged", "conv"), ("max_rel_residual", "max res/|A|"),
           ("max_eig_error", "max eig err"), ("peak_rss_mib_per_rank", "RSS MiB/rank"),
           ("plan_mib_per_rank", "plan MiB"), ("product_gbs", "prod GB/s"), ("product_of_triad", "of triad"),
           ("wall_vs_ref", "wall/ref"), ("matvecs_vs_ref", "mv/ref"), ("note", "note")]


def fmt(v):
    if v is None:
        return "-"
    if isinstance(v, float):
        if v == 0:
            return "0"
        if abs(v) >= 1e4 or abs(v) < 1e-2:
            return f"{v:.2e}"
        return f"{v:.3g}"
    return str(v)


def print_table(rows):
    cells = [[fmt(r.get(k)) for k, _ in COLUMNS] for r in rows]
    for c in cells:
        c[-1] = c[-1] if len(c[-1]) <= 110 else c[-1][:107] + "..."
    widths = [max(len(h), *(len(c[i]) for c in cells)) if cells else len(h) for i, (_, h) in enumerate(COLUMNS)]
    widths[-1] = len(COLUMNS[-1][1])
    line = "  ".join(h.ljust(w) for (_, h), w in zip(COLUMNS, widths))
    print(line)
    print("-" * len(line))
    for c in cells:
        print("  ".join(x.ljust(w) for x, w in zip(c, widths)).rstrip())


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--build", required=True)
    ap.add_argument("--lodestone")
    ap.add_argument("--cases", default="a,b,c,d")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--tiny", action="store_true")
    ap.add_argument("--ranks", default="1,2")
    ap.add_argument("--methods", default="power,block,chebyshev,krylov,auto")
    ap.add_argument("--no-scipy", action="store_true")
    ap.add_argument("--scipy-on-b", action="store_true", help="run SciPy on case b even if estimated over 10 min")
    ap.add_argument("--no-micro", action="store_true", help="leave out the Google Benchmark micro-benchmarks")
    ap.add_argument("--out")
    a = ap.parse_args()
    repeat = 1 if a.tiny else max(1, a.repeat)
    build = os.path.abspath(a.build)
    bdir = os.path.join(build, "tests", "benchmark")
    b = dict(lodestone=a.lodestone or os.path.join(build, "src", "lodestone"),
             triad=os.path.join(bdir, "bench_triad"), dense_reference=os.path.join(bdir, "bench_dense_reference"),
             checkpoint=os.path.join(bdir, "bench_checkpoint"), paired=os.path.join(bdir, "bench_paired"),
             micro=os.path.join(bdir, "bench_micro"))
    for k in ("lodestone", "triad", "dense_reference", "checkpoint", "paired"):
        if not os.access(b[k], os.X_OK):
            sys.exit(f"bench: {b[k]} is missing; build first (scripts/bench builds unless given --build)")
    stamp = datetime.datetime.now(datetime.timezone.utc).strftime("%Y%m%dT%H%M%SZ")
    out = os.path.abspath(a.out or os.path.join(ROOT, "results", "bench", stamp))
    work = os.path.join(out, "work")
    os.makedirs(work, exist_ok=True)
    info = machine_and_versions(b["lodestone"])
    info["date_utc"] = stamp
    info["mode"] = "tiny" if a.tiny else "full"
    info["repeat"] = repeat
    print(f"Lodestone benchmark suite, {stamp} ({info['mode']}, median of {repeat})")
    print(f"machine: {info['cpu']}, {info['cores']} cores, {info['memory_gib']} GiB; load {info['load_average_at_start']:.2f}")
    print(f"versions: lodestone {info['lodestone']}, PETSc {info['petsc']}, SciPy {info['scipy']}, "
          f"NumPy {info['numpy']}, OpenMPI {info['openmpi']}")
    print(f"start-up: {info['lodestone_start']}")
    sys.stdout.flush()

    triad = triad_anchor(b, info["cores"], a.tiny)
    ranks_list = [int(x) for x in a.ranks.split(",")]
    triad_for = {p: triad.get(min(p, info["cores"])) for p in ranks_list}
    print("triad: " + ", ".join(f"{t} core{'s' if t > 1 else ''} {v:.2f} GB/s" for t, v in sorted(triad.items())))
    sys.stdout.flush()

    all_cases = cases(a.tiny)
    rows, targets, checkpoints, paired, segmented = [], [], [], {}, {}
    scipy_seconds_a = None
    for cid in a.cases.split(","):
        case = dict(all_cases[cid], id=cid)
        path = os.path.join(work, f"case-{cid}.h5")
        rc, gen_s, so, se = timed(["timeout", "900"] + MPIRUN + ["-n", "2", b["lodestone"], "generate", case["kind"]] +
                                  case["gen"] + [path], 960)
        if rc != 0:
            rows.append(dict(case=cid, contender="generate", note=f"failed: {se.strip()}"))
            continue
        minfo = matrix_info(path)
        print(f"\ncase ({cid}): {case['title']}, generate {' '.join(case['gen'])} — {minfo['rows']} rows, {minfo['nnz']} nonzeros (generated in {gen_s:.1f} s)")
        sys.stdout.flush()
        case_rows = []
        # Contenders outside Lodestone first: they give the walk's reference.
        scipy_run = None
        if a.no_scipy:
            case_rows.append(dict(case=cid, contender="scipy", ranks=1, note="skipped (--no-scipy)"))
        elif cid == "b" and not a.tiny and not a.scipy_on_b:
            # SciPy eigsh's matvecs grow with 1/sqrt(relative gap) ~ nx, its time with rows: (b) is ~130x (a).
            est = scipy_seconds_a * (3e6 / 116000) * (2000 / 400) if scipy_seconds_a else None
            reason = (f"skipped: estimated {est:.0f} s from case (a) x rows ratio x gap ratio, over 10 min" if est and est > 600
                      else "skipped: over 10 min expected (case (a) not measured in this run; --scipy-on-b forces it)")
            if est and est <= 600:
                runs, note = run_scipy(b, case, path, work, repeat)
                scipy_run = runs[-1] if runs else None
                case_rows.append(summarize_scipy(case, runs, note, None))
            else:
                case_rows.append(dict(case=cid, contender="scipy eigsh", ranks=1, note=reason))
        else:
            runs, note = run_scipy(b, case, path, work, repeat)
            scipy_run = runs[-1] if runs else None
            case_rows.append(summarize_scipy(case, runs, note, None))
            if cid == "a" and runs:
                scipy_seconds_a = median([r["wall"] for r in runs])
        ref, ref_source = reference(case, scipy_run)
        for r in case_rows:
            if r["contender"].startswith("scipy") and scipy_run:
                vals = [complex(x, y) for x, y in zip(scipy_run["eigenvalues_re"], scipy_run["eigenvalues_im"])]
                r["max_eig_error"] = max_error(vals, ref) if ref_source != "SciPy eigs" else 0.0
        if case["kind"] == "dense-spectrum":
            runs, note = run_dense_reference(b, case, path, work, repeat)
            case_rows.append(summarize_dense(case, runs, note, ref))
        for method in a.methods.split(","):
            for p in ranks_list:
                if method == "chebyshev" and not minfo["symmetric"]:
                    case_rows.append(dict(case=cid, contender=f"lodestone {method}", ranks=p,
                                          note="not run: symmetric matrices only"))
                    continue
                # The machine's bandwidth drifts over minutes on a shared host: the triad is
                # taken again just before and just after this contender's runs, and the
                # product is set against the highest of the three readings (never flattered
                # by a triad that happened to be measured in a slow minute).
                cores_used = min(p, info["cores"])
                before = triad_at(b, cores_used, a.tiny)
                runs, note = run_lodestone(b, case, path, method, p, work, repeat, minfo)
                after = triad_at(b, cores_used, a.tiny)
                row = summarize_lodestone(case, method, p, runs, note, ref, minfo, (triad_for.get(p), before, after))
                resolved = method if method != "auto" else auto_method(minfo["symmetric"])
                pm = plan_memory(b, path, case, resolved, p)
                row["plan_mib_per_rank"] = pm / 2**20 if pm else None
                case_rows.append(row)
                print(f"  {row['contender']:<20} P={p}  wall {fmt(row.get('wall_s'))} s  matvecs {fmt(row.get('matvecs'))}"
                      f"  triad at start / before / after {row['triad_readings']} GB/s"
                      f"{rank_spread_text(row, '  product ')}  {row.get('note', '')}")
                sys.stdout.flush()
                if method == "auto" and case["kind"] == "laplace2d":
                    # The product-phase target's verdict (see segmented_solve).
                    sg = segmented[(cid, p)] = segmented_solve(b, case, path, p, cores_used, work, a.tiny, minfo, ref)
                    print(f"  {'  in segments':<20} P={p}  " + (segmented_text(sg) if "median" in sg else sg["note"]))
                    sys.stdout.flush()
        # Ratios against the outside contender of the case.
        base = next((r for r in case_rows if r["contender"].startswith(("scipy", "lapacke")) and r.get("wall_s")), None)
        for r in case_rows:
            r["reference"] = ref_source
            if base and r["contender"].startswith("lodestone") and r.get("wall_s"):
                r["wall_vs_ref"] = r["wall_s"] / base["wall_s"]
                if base.get("matvecs") and r.get("matvecs"):
                    r["matvecs_vs_ref"] = r["matvecs"] / base["matvecs"]
        rows += case_rows
        # Checkpoint size and write time (issue 4), with the method auto picks, at each rank count.
        resolved = auto_method(minfo["symmetric"])
        for p in ranks_list:
            ck = checkpoint_probe(b, case, path, resolved, p, work, repeat)
            if ck:
                ck.update(case=cid, method=resolved)
                checkpoints.append(ck)

        # ---- targets of issue 6 ----
        def find(contender, p):
            return next((r for r in case_rows if r["contender"] == contender and r["ranks"] == p), None)
        if cid == "a":
            auto2 = find("lodestone auto", 2)
            if auto2 and auto2.get("wall_vs_ref") is not None:
                ok = (auto2["wall_vs_ref"] <= 0.10 and auto2["max_rel_residual"] <= case["tol"]
                      and auto2.get("matvecs_vs_ref", 1e9) <= 3)
                targets.append(dict(target="(a) auto P=2: wall <= 0.10x eigsh, residual <= tol, matvecs <= 3x eigsh",
                                    measured=f"wall {auto2['wall_vs_ref']:.3f}x, residual {auto2['max_rel_residual']:.1e}, "
                                             f"matvecs {auto2.get('matvecs_vs_ref', float('nan')):.2f}x",
                                    verdict="PASS" if ok else "MISS"))
            else:
                targets.append(dict(target="(a) auto P=2 vs eigsh", measured="not measured", verdict="n/a"))
        if cid == "c":
            auto2 = find("lodestone auto", 2)
            if auto2 and auto2.get("wall_vs_ref") is not None:
                targets.append(dict(target="(c) auto P=2: wall <= 0.5x eigs", measured=f"{auto2['wall_vs_ref']:.3f}x",
                                    verdict="PASS" if auto2["wall_vs_ref"] <= 0.5 else "MISS"))
            else:
                targets.append(dict(target="(c) auto P=2 vs eigs", measured="not measured", verdict="n/a"))
        if case["kind"] == "laplace2d":
            pk = paired[cid] = paired_kernel(b, case, work, a.tiny)
            print(f"  {paired_text(pk)}" if pk else "  bench_paired failed")
            for p in ranks_list:
                # The verdict: the solve in segments, each against the triad read on either side
                # of it. Beside it, the whole solve in one run against the highest of three
                # readings minutes apart (the verdict until 2026-12-04, docs/benchmarks.md).
                sg = segmented.get((cid, p)) or {}
                r = find("lodestone auto", p)
                f = r.get("product_of_triad") if r else None
                whole = (f"one run: {100 * f:.0f}% ({r['product_gbs']:.1f} GB/s against the highest of "
                         f"{r['triad_readings']} GB/s; {100 * r['product_of_lowest_triad']:.0f}% against the lowest"
                         f"{rank_spread_text(r, '; ')})" if f else "one run: not measured")
                kernel = f"; {paired_text(pk)}" if pk and p == 1 else ""
                targets.append(dict(target=f"({cid}) product phase >= 80% of triad, P={p}",
                                    measured=(f"{segmented_text(sg)}; {whole}{kernel}" if "median" in sg
                                              else f"in segments: {sg.get('note', 'not run')}; {whole}{kernel}"),
                                    verdict=("PASS" if sg["median"] >= 0.8 else "MISS") if "median" in sg else "n/a"))
        worst = None
        for r in case_rows:
            if r.get("peak_rss_mib_per_rank") and r.get("plan_mib_per_rank"):
                ratio = r["peak_rss_mib_per_rank"] / r["plan_mib_per_rank"]
                r["rss_vs_plan"] = ratio
                if worst is None or ratio > worst[0]:
                    worst = (ratio, r)
        if worst:
            ok = worst[0] <= 1.3  # the model may be generous, it must not underestimate by more than 30%
            targets.append(dict(target=f"({cid}) peak RSS per rank within 1.3x of the plan's model (worst run)",
                                measured=f"{worst[0]:.2f}x ({worst[1]['contender']} P={worst[1]['ranks']}: "
                                         f"{worst[1]['peak_rss_mib_per_rank']:.0f} vs {worst[1]['plan_mib_per_rank']:.0f} MiB)",
                                verdict="PASS" if ok else "MISS"))
        for ck in [c for c in checkpoints if c["case"] == cid]:
            if ck.get("write_bandwidth") and ck.get("dd_bandwidth"):
                ratio = ck["write_bandwidth"] / ck["dd_bandwidth"]
                ck["of_dd"] = ratio
                targets.append(dict(target=f"({cid}) checkpoint write >= 50% of dd with fsync, P={ck['ranks']}",
                                    measured=f"{100 * ratio:.0f}%", verdict="PASS" if ratio >= 0.5 else "MISS"))

    # Micro-benchmarks (built with -DLODESTONE_BENCHMARKS=ON).
    micro = None
    if os.access(b["micro"], os.X_OK) and not a.no_micro:
        grid = "60" if a.tiny else "1000"
        mjson = os.path.join(out, "micro.json")
        extra = ["--benchmark_min_time=0.01"] if a.tiny else []
        rc, _, so, se = timed(["timeout", "900", b["micro"], "--grid", grid, "--dir", work,
                               f"--benchmark_out={mjson}", "--benchmark_out_format=json"] + extra, 960)
        micro = mjson if rc == 0 else None
        if rc == 0:
            print("\nmicro-benchmarks (Google Benchmark, 1 rank, 2-D Laplacian of " + grid + "^2 rows):")
            print(so)

    print()
    print_table(rows)
    if checkpoints:
        print("\ncheckpoint (issue 4): bytes written vs the vectors that must be kept; write bandwidth vs dd + fsync")
        print(f"  {'case':<5}{'method':<11}{'P':<3}{'columns':>8}{'bytes':>14}{'minimum':>14}{'overhead':>10}"
              f"{'write s':>10}{'MB/s':>9}{'dd MB/s':>9}{'of dd':>7}")
        for c in checkpoints:
            print(f"  {c['case']:<5}{c['method']:<11}{c['ranks']:<3}{c['columns']:>8}{c['bytes']:>14.0f}"
                  f"{c['minimum_bytes']:>14.0f}{c['bytes'] / c['minimum_bytes'] - 1:>9.1%} {c['seconds']:>9.3f}"
                  f"{(c['write_bandwidth'] or 0) / 1e6:>9.0f}{(c['dd_bandwidth'] or 0) / 1e6:>9.0f}"
                  f"{c.get('of_dd', float('nan')):>7.2f}")
    print("\ntargets (issue 6):")
    for t in targets:
        print(f"  {t['verdict']:<5} {t['target']}: {t['measured']}")
    print(f"\nnoise: one machine shared with other work (load {os.getloadavg()[0]:.2f} at the end); medians of {repeat}.")

    keys = [k for k, _ in COLUMNS] + ["solve_s", "product_s", "product_rank_spread", "product_calls", "triad_gbs",
                                      "triad_readings", "product_of_lowest_triad", "rss_vs_plan", "reference"]
    with open(os.path.join(out, "table.csv"), "w", newline="") as f:
        w = csv.DictWriter(f, fieldnames=keys, extrasaction="ignore")
        w.writeheader()
        for r in rows:
            w.writerow({k: r.get(k, "") for k in keys})
    with open(os.path.join(out, "results.json"), "w") as f:
        json.dump(dict(machine=info, triad_gbs=triad, rows=rows, checkpoints=checkpoints, paired_kernel=paired,
                       segmented={f"{c}/{p}": v for (c, p), v in segmented.items()},
                       targets=targets, micro_json=micro), f, indent=1, default=str)
    print(f"written: {out}/table.csv, {out}/results.json")
    # The generated matrices are large; keep only logs and results.
    for name in os.listdir(work):
        if name.endswith(".h5"):
            os.remove(os.path.join(work, name))


main()

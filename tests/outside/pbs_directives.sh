#!/usr/bin/env bash
# PBS scripts from `lodestone plan` against the directive forms documented in the
# PBS Professional User's Guide (Altair): qsub options -N, -A, -q, -j, -l select=,
# -l place=, -l walltime=, the "size" and "duration" value formats, and -W depend=
# and -v for chaining. The forms below are recalled from memory of that guide, not
# copied from it; see the comments beside each pattern. No PBS server is needed.
set -euo pipefail
: "${LODESTONE:?}"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
cd "$tmp"
timeout 120 "$LODESTONE" generate laplace1d --n 5000 m.h5 >/dev/null
timeout 120 "$LODESTONE" plan m.h5 --pairs 3 --scheduler pbs --cores-per-node 4 --node-memory 8G \
  --max-walltime 26:30:00 --nodes 2 --job-name Rail-modes.v2 --account proj_42 --partition workq@head1 --out a.pbs >/dev/null
timeout 120 "$LODESTONE" plan m.h5 --pairs 2 --scheduler pbs --cores-per-node 8 --ranks-per-node 2 \
  --node-memory 512M --max-walltime 45m --out b.pbs >/dev/null
python3 - a.pbs b.pbs <<'PY'
import re, sys

# Recalled from memory of the PBS Professional User's Guide, "Submitting a PBS Job" and
# "Formats" sections:
#  - job name (-N): up to 236 characters, first character alphabetic, no whitespace.
NAME = re.compile(r"[A-Za-z][!-~]{0,235}$")
#  - size: an integer followed by an optional suffix b, kb, mb, gb, tb, pb (or w, kw, ...
#    for words), case-insensitive; no fractional values.
SIZE = re.compile(r"\d+(?:[kmgtp]?[bw])?$", re.I)
#  - duration (walltime): [[hours:]minutes:]seconds[.milliseconds]; hours may exceed 24.
DURATION = re.compile(r"(?:(?:\d+:)?[0-5]?\d:)?[0-5]?\d(?:\.\d+)?$")
#  - select: [N:]chunk[+[N:]chunk ...], a chunk being resource=value pairs joined by ':'.
CHUNK_RES = {"ncpus": re.compile(r"\d+$"), "mpiprocs": re.compile(r"\d+$"), "mem": SIZE}
#  - place: [arrangement][:sharing][:grouping], arrangement one of free, pack, scatter, vscatter.
PLACE = re.compile(r"(free|pack|scatter|vscatter)(:(excl|shared|exclhost))?(:group=\w+)?$")
#  - -j: oe, eo or n.   - -q: queue, @server or queue@server.   - -A: an account string.
JOIN = {"oe", "eo", "n"}
QUEUE = re.compile(r"([A-Za-z][\w.-]*)?(@[\w.-]+)?$")

def check(path):
    text = open(path).read()
    lines = text.splitlines()
    assert lines[0].startswith("#!"), "no interpreter line"
    seen_command = False
    directives = []
    for line in lines[1:]:
        if line.startswith("#PBS"):
            # Directives are read only before the first executable line.
            assert not seen_command, f"{path}: directive after a command: {line}"
            directives.append(line)
        elif line.strip() and not line.startswith("#"):
            seen_command = True
    opts = {}
    for d in directives:
        m = re.match(r"#PBS -(\w) (\S+)$", d)
        assert m, f"{path}: malformed directive {d!r}"
        opts.setdefault(m.group(1), []).append(m.group(2))
    if "N" in opts:
        assert NAME.match(opts["N"][0]), f"job name {opts['N']}"
    if "A" in opts:
        assert re.match(r"[\w.-]+$", opts["A"][0]), f"account {opts['A']}"
    if "q" in opts:
        assert QUEUE.match(opts["q"][0]), f"queue {opts['q']}"
    assert opts.get("j") and opts["j"][0] in JOIN, f"-j {opts.get('j')}"
    res = {}
    for l in opts["l"]:
        key, _, value = l.partition("=")
        res[key] = value
    sel = res["select"]
    for part in sel.split("+"):
        fields = part.split(":")
        if fields[0].isdigit():
            assert int(fields[0]) >= 1
            fields = fields[1:]
        assert fields, f"empty chunk in {sel}"
        for f in fields:
            k, _, v = f.partition("=")
            assert k in CHUNK_RES and CHUNK_RES[k].match(v), f"chunk resource {f!r} in {sel}"
    assert PLACE.match(res["place"]), res["place"]
    assert DURATION.match(res["walltime"]), res["walltime"]
    # Chaining: qsub -W depend=afterany:<jobid> and -v VAR=value (both documented qsub options).
    assert re.search(r'qsub -W depend=afterany:"\$PBS_JOBID" -v "LODESTONE_CHAIN=\$\(\(chain \+ 1\)\)" "\$script"', text), "chain"
    return res, opts

a, ao = check("a.pbs")
assert a["select"].startswith("2:ncpus=4:mpiprocs=4:mem="), a["select"]
assert a["walltime"] == "26:30:00", a["walltime"]
assert ao["N"] == ["Rail-modes.v2"] and ao["A"] == ["proj_42"] and ao["q"] == ["workq@head1"]
b, _ = check("b.pbs")
assert ":mpiprocs=2:" in b["select"] and b["select"].endswith("mb"), b["select"]
assert b["walltime"] == "00:45:00", b["walltime"]
# The patterns can fail: a few forms the guide does not allow.
for bad in ["1.5gb", "12 gb", "gb"]:
    assert not SIZE.match(bad), bad
for bad in ["1:75:00", "1-02:00:00", "2h"]:
    assert not DURATION.match(bad), bad
assert not NAME.match("9lives") and not NAME.match("two words")
print("pbs_directives: ok")
PY

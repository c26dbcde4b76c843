#!/usr/bin/env bash
# scripts/plot-history on a real results file (written by the C++ writer at 2 ranks):
# the PNG must be a valid PNG (signature and IHDR chunk per the PNG specification,
# ISO/IEC 15948) of plausible size; the SVG must be an SVG document; a file that
# is not a results file is refused with exit status 1.
set -euo pipefail
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
export MPLCONFIGDIR="$tmp/mpl"
run() { local p="$1"; shift; timeout 120 mpirun --allow-run-as-root --oversubscribe -n "$p" "$@"; }
plot="$LODESTONE_SOURCE/scripts/plot-history"
fail() { echo "FAIL: $*" >&2; exit 1; }

run 2 "$LODESTONE_BUILD/tests/write_sample_result" 40 3 "$tmp/rod.h5" "$tmp/modes.h5"
timeout 120 "$plot" "$tmp/modes.h5" -o "$tmp/modes.png" >/dev/null
timeout 120 "$plot" "$tmp/modes.h5" >/dev/null   # default name beside the result
[ -f "$tmp/modes-history.png" ] || fail "no default output modes-history.png"
timeout 120 "$plot" "$tmp/modes.h5" -o "$tmp/modes.svg" >/dev/null

/usr/bin/python3 - "$tmp/modes.png" "$tmp/modes.svg" <<'PY'
import struct, sys
png = open(sys.argv[1], "rb").read()
# PNG signature and the first chunk, IHDR, with width and height (PNG specification, ISO/IEC 15948).
assert png[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG signature"
assert png[12:16] == b"IHDR", "first chunk is not IHDR"
width, height = struct.unpack(">II", png[16:24])
assert 400 <= width <= 4000 and 400 <= height <= 4000, (width, height)
assert 10_000 < len(png) < 5_000_000, len(png)   # a drawn figure, not an empty canvas
assert png[-8:-4] == b"IEND", "PNG does not end with IEND"
svg = open(sys.argv[2], encoding="utf-8").read()
assert "<svg" in svg and svg.rstrip().endswith("</svg>"), "not an SVG document"
PY

rc=0
timeout 120 "$plot" "$tmp/rod.h5" -o "$tmp/bad.png" 2>"$tmp/err" || rc=$?
[ "$rc" -eq 1 ] || fail "plot-history on a matrix file exited $rc, expected 1"
grep -q "not a Lodestone results file" "$tmp/err" || fail "unclear message: $(cat "$tmp/err")"
[ ! -e "$tmp/bad.png" ] || fail "a picture was written for a bad input"
echo "result_plot: ok"

#!/usr/bin/env bash
# Installs Lodestone into a temporary prefix (checks the binary, headers, pkg-config
# file and the Python helper), then configures, builds and runs an
# outside project that finds it with find_package(Lodestone), at 1 and 2 ranks.
set -euo pipefail
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
cmake --install "$LODESTONE_BUILD" --prefix "$tmp/prefix" >/dev/null
petsc=$(sed -n 's/^LODESTONE_PETSC:STRING=//p' "$LODESTONE_BUILD/CMakeCache.txt")
test -x "$tmp/prefix/bin/lodestone"
test -f "$tmp/prefix/include/lodestone/matrix.hpp"
test -f "$tmp/prefix/lib/pkgconfig/lodestone.pc"
grep -q "Requires: $petsc " "$tmp/prefix/lib/pkgconfig/lodestone.pc"
cmake -S "$LODESTONE_SOURCE/tests/install_consumer" -B "$tmp/consumer" -DCMAKE_PREFIX_PATH="$tmp/prefix" >/dev/null
cmake --build "$tmp/consumer" -j 2 >/dev/null
for p in 1 2; do
  out=$(timeout 120 mpirun --allow-run-as-root --oversubscribe -n "$p" "$tmp/consumer/consumer")
  echo "$out"
  grep -q "nnz=148 .*: ok" <<<"$out"
done
"$tmp/prefix/bin/lodestone" --version
# The installed Python helper finds its module under share/ and converts a matrix
# written by the installed lodestone back to SciPy.
"$tmp/prefix/bin/lodestone" generate laplace1d --n 12 "$tmp/line.h5" >/dev/null
"$tmp/prefix/bin/to-lodestone" back "$tmp/line.h5" "$tmp/line.npz"
test -s "$tmp/line.npz"

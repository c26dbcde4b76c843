#!/usr/bin/env bash
# lodestone import of a three-line file that declares 2e9 rows, under a 4 GiB
# address-space limit per process: the row offsets cannot be allocated, and the
# import must refuse with one message (exit 1), not abort (it ended in an uncaught
# std::bad_alloc before). Found while bounding the sizes the import fuzz target may declare.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
ulimit -v 4194304
expect_defect 2 "not enough memory for the rows of a 2000000000 x 2000000000 matrix" <<'MTX'
%%MatrixMarket matrix coordinate real general
2000000000 2000000000 1
1 1 1.0
MTX

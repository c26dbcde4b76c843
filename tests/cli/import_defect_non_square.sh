#!/usr/bin/env bash
# lodestone import refuses a non-square matrix: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 2 "the matrix is 4 x 3, but eigenpairs need a square matrix" <<'MTX'
%%MatrixMarket matrix coordinate real general
4 3 1
1 1 1.0
MTX

#!/usr/bin/env bash
# lodestone import refuses a matrix with no stored entries: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 2 "the matrix has no stored entries" <<'MTX'
%%MatrixMarket matrix array real general
2 2
0
0.0
-0
0e5
MTX

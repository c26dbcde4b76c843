#!/usr/bin/env bash
# lodestone import refuses a diagonal entry in a skew-symmetric file: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 3 "entry (2, 2) is not below the diagonal; a skew-symmetric file stores only the strict lower triangle" <<'MTX'
%%MatrixMarket matrix coordinate real skew-symmetric
2 2 2
2 2 1.0
2 1 1.0
MTX

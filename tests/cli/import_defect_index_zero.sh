#!/usr/bin/env bash
# lodestone import refuses a 0 index (indices are 1-based): exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 4 "row index 0 is out of range 1..3 (indices are 1-based)" <<'MTX'
%%MatrixMarket matrix coordinate real general
3 3 3
1 1 1.0
0 2 1.0
3 3 1.0
MTX

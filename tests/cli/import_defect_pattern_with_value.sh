#!/usr/bin/env bash
# lodestone import refuses a pattern line that carries a value: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 4 "a pattern entry holds only ROW COL, found a value '7'" <<'MTX'
%%MatrixMarket matrix coordinate pattern general
3 3 2
1 1
2 2 7
MTX

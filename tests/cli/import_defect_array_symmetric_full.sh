#!/usr/bin/env bash
# lodestone import refuses a symmetric array that stores both triangles instead of the lower one: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 2 "a symmetric 2 x 2 array stores 3 values (only its lower triangle), but the file holds 4 (too many entries)" <<'MTX'
%%MatrixMarket matrix array real symmetric
2 2
1.0
2.0
2.0
3.0
MTX

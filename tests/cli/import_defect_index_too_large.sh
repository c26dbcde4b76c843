#!/usr/bin/env bash
# lodestone import refuses an index larger than the size: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 5 "column index 4 is out of range 1..3" <<'MTX'
%%MatrixMarket matrix coordinate real general
3 3 3
1 1 1.0
2 2 1.0
3 4 1.0
MTX

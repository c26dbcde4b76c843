#!/usr/bin/env bash
# lodestone import refuses an entry above the diagonal of a symmetric file: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 4 "entry (1, 2) lies above the diagonal; a symmetric file stores only the lower triangle" <<'MTX'
%%MatrixMarket matrix coordinate real symmetric
2 2 2
1 1 1.0
1 2 1.0
MTX

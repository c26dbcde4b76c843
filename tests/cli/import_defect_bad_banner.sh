#!/usr/bin/env bash
# lodestone import refuses a file without the banner: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 1 "expected the banner '%%MatrixMarket matrix FORMAT FIELD SYMMETRY'" <<'MTX'
5 5 1
1 1 1.0
MTX

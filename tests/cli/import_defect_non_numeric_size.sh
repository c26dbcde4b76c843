#!/usr/bin/env bash
# lodestone import refuses a size line that is not made of integers: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 2 "bad size line: 'four' is not a non-negative integer" <<'MTX'
%%MatrixMarket matrix coordinate real general
four 4 1
1 1 1.0
MTX

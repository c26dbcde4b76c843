#!/usr/bin/env bash
# lodestone import refuses a NaN value: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 3 "value 'NaN' is not finite (NaN and Inf are refused)" <<'MTX'
%%MatrixMarket matrix coordinate real general
2 2 2
1 1 NaN
2 2 1.0
MTX

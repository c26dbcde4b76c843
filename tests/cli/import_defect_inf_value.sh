#!/usr/bin/env bash
# lodestone import refuses an infinite value: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 4 "value '-Inf' is not finite (NaN and Inf are refused)" <<'MTX'
%%MatrixMarket matrix array real general
2 2
1.0
-Inf
3.0
4.0
MTX

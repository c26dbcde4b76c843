#!/usr/bin/env bash
# lodestone import refuses a value that is not a number: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 4 "value '1.0e' is not a number" <<'MTX'
%%MatrixMarket matrix coordinate real general
3 3 3
1 1 1.0
2 2 1.0e
3 3 1.0
MTX

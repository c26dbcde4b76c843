#!/usr/bin/env bash
# lodestone import refuses a non-integer value in an integer file: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 3 "value '2.5' is not an integer (field 'integer')" <<'MTX'
%%MatrixMarket matrix coordinate integer general
2 2 2
1 1 2.5
2 2 1
MTX

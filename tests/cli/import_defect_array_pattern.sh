#!/usr/bin/env bash
# lodestone import refuses an array file with pattern field: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 1 "field 'pattern' is only allowed with the coordinate format" <<'MTX'
%%MatrixMarket matrix array pattern general
2 2
MTX

#!/usr/bin/env bash
# lodestone import refuses an unknown format: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 1 "unknown format 'sparse' (expected coordinate or array)" <<'MTX'
%%MatrixMarket matrix sparse real general
3 3 1
1 1 1.0
MTX

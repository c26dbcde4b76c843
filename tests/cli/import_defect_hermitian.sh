#!/usr/bin/env bash
# lodestone import refuses a hermitian matrix (real arithmetic only): exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 1 "hermitian matrices are not supported (real arithmetic only)" <<'MTX'
%%MatrixMarket matrix coordinate real hermitian
2 2 1
1 1 1.0
MTX

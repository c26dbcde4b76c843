#!/usr/bin/env bash
# lodestone import refuses a file that ends before its size line: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 4 "the file ends before the size line" <<'MTX'
%%MatrixMarket matrix coordinate real general
% only
% comments
MTX

#!/usr/bin/env bash
# lodestone import refuses a coordinate size line without the entry count: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 3 "bad size line '4 4': expected 'ROWS COLS ENTRIES'" <<'MTX'
%%MatrixMarket matrix coordinate real general
% a comment
4 4
1 1 1.0
MTX

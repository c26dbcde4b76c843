#!/usr/bin/env bash
# lodestone import refuses more entries than the size line declares: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 2 "the size line declares 2 entries, but the file holds 3 (too many entries)" <<'MTX'
%%MatrixMarket matrix coordinate real general
3 3 2
1 1 1.0
2 2 1.0
3 3 1.0
MTX

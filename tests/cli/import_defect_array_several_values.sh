#!/usr/bin/env bash
# lodestone import names the first array line holding more than one value, rather than a value count that only follows from it: exit 1 and one line, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 3 "expected one value per line (array format), found '1 2'" <<'MTX'
%%MatrixMarket matrix array real general
2 2
1 2
3 4
MTX

#!/usr/bin/env bash
# lodestone import refuses an empty file: exit 1 and one line naming file, line and defect, at 1 and 3 ranks.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 1 "the file is empty" < /dev/null

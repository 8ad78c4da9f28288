#!/usr/bin/env bash
# Lists the functions longer than a limit (default 100 lines), longest first, with Universal Ctags
# (Debian package universal-ctags):  bash tools/long_functions.sh [LIMIT] [DIR...]
set -euo pipefail
limit=${1:-100}
shift || true
dirs=("$@")
[ ${#dirs[@]} -gt 0 ] || dirs=(src include)
cd "$(dirname "$0")/.."
ctags -R --languages=C++ --kinds-C++=f --fields=+ne -x --_xformat='%{line} %{end} %N %F' "${dirs[@]}" 2>/dev/null |
  awk -v limit="$limit" '$2 != "" { n = $2 - $1 + 1; if (n > limit) printf "%5d  %s:%d  %s\n", n, $4, $1, $3 }' |
  sort -rn

#!/usr/bin/env bash
# Every C++ file of the project follows .clang-format. Exit 77 (skipped)
# when clang-format is not installed; 1 naming the files that differ.
set -euo pipefail
root="$1"
command -v clang-format >/dev/null || { echo "clang-format not found: skipped"; exit 77; }
cd "$root"
mapfile -d '' files < <(find include src tests \( -name '*.cpp' -o -name '*.hpp' \) -print0 | sort -z)
# One run over all files; each difference is reported as FILE:LINE:COL: error.
if ! report=$(clang-format --dry-run --Werror "${files[@]}" 2>&1); then
  printf 'not formatted (run clang-format -i on them):\n'
  printf '%s\n' "$report" | grep -o '^[^:]*:[0-9]*:[0-9]*: error' | cut -d: -f1 | sort -u |
    sed 's/^/  /'
  exit 1
fi
echo "all ${#files[@]} files formatted"

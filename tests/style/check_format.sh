#!/usr/bin/env bash
# Every C++ file of the project follows .clang-format. Exit 77 (skipped)
# when clang-format is not installed; 1 naming the files that differ.
set -euo pipefail
root="$1"
command -v clang-format >/dev/null || { echo "clang-format not found: skipped"; exit 77; }
cd "$root"
differ=()
while IFS= read -r -d '' file; do
  clang-format --dry-run --Werror "$file" >/dev/null 2>&1 || differ+=("$file")
done < <(find include src tests \( -name '*.cpp' -o -name '*.hpp' \) -print0 | sort -z)
if [ ${#differ[@]} -gt 0 ]; then
  printf 'not formatted (run clang-format -i on them):\n'
  printf '  %s\n' "${differ[@]}"
  exit 1
fi
echo "all files formatted"

#!/usr/bin/env bash
# Inputs large enough for levelhead to restart itself with huge pages
# (src/cli/large_pages.cpp) give the same results as a run that does not
# restart, with relative paths and quoted arguments intact.
# usage: large_inputs_check.sh LEVELHEAD WORK_FOLDER
set -euo pipefail
levelhead=$1
work=$2
rm -rf "$work"
mkdir -p "$work/in put"
cd "$work/in put"

# An invented 250 x 250 levelling grid (about 6 MB of tables), one benchmark.
awk 'BEGIN {
  side = 250
  print "id,x,y,height" > "points.csv"
  print "from,to,dh,length" > "sections.csv"
  for (r = 0; r < side; r++) for (c = 0; c < side; c++) {
    printf "P%d_%d,%d,%d,%s\n", r, c, c * 50, r * 50, (r == 0 && c == 0 ? "100.0000" : "") > "points.csv"
    if (c + 1 < side) printf "P%d_%d,P%d_%d,%.5f,50.0\n", r, c, r, c + 1, 0.001 * ((r * 7 + c * 3) % 11 - 5) > "sections.csv"
    if (r + 1 < side) printf "P%d_%d,P%d_%d,%.5f,50.0\n", r, c, r + 1, c, 0.001 * ((r * 5 + c * 9) % 13 - 6) > "sections.csv"
  }
}'
size=$(($(stat -c %s points.csv) + $(stat -c %s sections.csv)))
if [ "$size" -lt $((4 * 1024 * 1024)) ]; then
  echo "the generated tables ($size bytes) are below the restart threshold" >&2
  exit 1
fi

"$levelhead" adjust --points points.csv --sections sections.csv --out "out restarted" --quiet
LEVELHEAD_LARGE_PAGES=0 "$levelhead" adjust --points points.csv --sections sections.csv \
  --out "out as is" --quiet
for table in heights.csv residuals.csv; do
  cmp "out restarted/$table" "out as is/$table"
done
echo "large inputs: same results with and without the restart"

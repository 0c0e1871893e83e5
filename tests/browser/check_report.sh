#!/usr/bin/env bash
# Opens the demo's report.html in headless Chromium (Debian's package) and
# checks that it loads without requesting anything and that every figure is
# drawn with a size. Exit 77 (skipped) when Chromium is not installed.
# Usage: check_report.sh LEVELHEAD WORK_FOLDER
set -euo pipefail
levelhead=$1
work=$2
browser=$(command -v chromium || command -v chromium-browser || true)
if [ -z "$browser" ]; then
  echo "chromium is not installed (scripts/install-deps.sh --browser): skipped"
  exit 77
fi
rm -rf "$work"
mkdir -p "$work"
work=$(cd "$work" && pwd)
"$levelhead" demo --out "$work/demo" > /dev/null

# A harness page frames the report and writes what it measured into its own
# DOM, which --dump-dom prints once the page has loaded.
cat > "$work/check.html" <<'HTML'
<!DOCTYPE html>
<html><body><pre id="result">not loaded</pre>
<iframe id="report" src="demo/report.html" width="1200" height="900"></iframe>
<script>
document.getElementById('report').addEventListener('load', function () {
  var doc = this.contentDocument, lines = [];
  var figures = doc.querySelectorAll('figure');
  lines.push('figures ' + figures.length);
  figures.forEach(function (f) {
    var svg = f.querySelector('svg');
    var box = svg ? svg.getBoundingClientRect() : {width: 0, height: 0};
    lines.push((box.width > 0 && box.height > 0 ? 'sized ' : 'EMPTY ') + f.id);
  });
  // Anything that could fetch: elements with a source or link, and what
  // the browser recorded as fetched.
  var fetching = doc.querySelectorAll('[src], [href], link, script, iframe, object, embed, image').length;
  lines.push('requests ' + (fetching + this.contentWindow.performance.getEntriesByType('resource').length));
  lines.push('title ' + doc.title);
  document.getElementById('result').textContent = lines.join('\n');
});
</script>
</body></html>
HTML

dom=$("$browser" --headless --no-sandbox --disable-gpu --allow-file-access-from-files \
      --virtual-time-budget=10000 --dump-dom "file://$work/check.html" 2> "$work/browser.log")
result=$(printf '%s\n' "$dom" | sed -n '/<pre id="result">/,/<\/pre>/p')
printf '%s\n' "$result"

fail=0
count=$(printf '%s\n' "$result" | sed -n 's/.*figures \([0-9]*\).*/\1/p')
if [ -z "$count" ] || [ "$count" -lt 4 ]; then echo "FAIL: expected at least 4 figures"; fail=1; fi
if printf '%s\n' "$result" | grep -q "EMPTY"; then echo "FAIL: a figure has no size"; fail=1; fi
if ! printf '%s\n' "$result" | grep -q "^requests 0$"; then echo "FAIL: the report requested resources"; fail=1; fi
if printf '%s\n' "$result" | grep -q "not loaded"; then echo "FAIL: the report did not load"; fail=1; fi
exit $fail

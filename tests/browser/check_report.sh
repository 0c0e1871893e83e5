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

# A harness page frames the report at a narrow (700 px) and a wide
# (1280 px) width, and as printed (its print rules, at an A4 page's text
# width), and writes what it measured into its own DOM, which --dump-dom
# prints once all have loaded: the figures drawn with a size, nothing wider
# than the page (cut off), no text of a figure over another (the browser's
# own boxes), and no request for anything.
cat > "$work/check.html" <<'HTML'
<!DOCTYPE html>
<html><body><pre id="result">not loaded</pre>
<iframe class="report" src="demo/report.html" width="700" height="900"></iframe>
<iframe class="report" src="demo/report.html" width="1280" height="900"></iframe>
<iframe class="report print" src="demo/report.html" width="688" height="900"></iframe>
<script>
var lines = [], pending = 3;
// As printed: the report's print rules applied on screen, at an A4 page's
// text width (210 mm less 2 x 14 mm at 96 px per inch).
function apply_print_rules(doc) {
  var style = doc.createElement('style'), rules = [];
  Array.prototype.forEach.call(doc.styleSheets, function (sheet) {
    Array.prototype.forEach.call(sheet.cssRules, function (rule) {
      if (rule.media && rule.media.mediaText === 'print') {
        Array.prototype.forEach.call(rule.cssRules, function (r) { rules.push(r.cssText); });
      }
    });
  });
  style.textContent = rules.join('\n');
  doc.head.appendChild(style);
  lines.push('print rules ' + rules.length);
}
function measure(frame) {
  var doc = frame.contentDocument;
  var width = frame.classList.contains('print') ? 'print' : frame.width;
  if (width === 'print') apply_print_rules(doc);
  var figures = doc.querySelectorAll('figure');
  lines.push(width + ' figures ' + figures.length);
  figures.forEach(function (f) {
    var svg = f.querySelector('svg');
    var box = svg ? svg.getBoundingClientRect() : {width: 0, height: 0};
    lines.push(width + (box.width > 0 && box.height > 0 ? ' sized ' : ' EMPTY ') + f.id);
    var texts = Array.prototype.map.call(f.querySelectorAll('text'), function (t) {
      return {r: t.getBoundingClientRect(), s: t.textContent};
    }).filter(function (t) { return t.r.width > 0; });
    for (var i = 0; i < texts.length; ++i) {
      for (var j = i + 1; j < texts.length; ++j) {
        var a = texts[i].r, b = texts[j].r, slack = 0.5;
        if (a.left < b.right - slack && b.left < a.right - slack &&
            a.top < b.bottom - slack && b.top < a.bottom - slack) {
          lines.push(width + ' OVERLAP ' + f.id + ': "' + texts[i].s + '" and "' + texts[j].s + '"');
        }
      }
    }
  });
  var page = doc.documentElement;
  lines.push(width + (page.scrollWidth <= page.clientWidth + 1 ? ' fits' : ' CUT-OFF ' + page.scrollWidth));
  // Links within the page (the contents) fetch nothing.
  var fetching = doc.querySelectorAll('[src], [href]:not([href^="#"]), link, script, iframe, object, embed, image').length;
  lines.push(width + ' requests ' + (fetching + frame.contentWindow.performance.getEntriesByType('resource').length));
  lines.push(width + ' title ' + doc.title);
  if (--pending === 0) document.getElementById('result').textContent = lines.join('\n');
}
document.querySelectorAll('iframe.report').forEach(function (frame) {
  frame.addEventListener('load', function () { measure(frame); });
});
</script>
</body></html>
HTML

dom=$("$browser" --headless --no-sandbox --disable-gpu --allow-file-access-from-files \
      --virtual-time-budget=10000 --dump-dom "file://$work/check.html" 2> "$work/browser.log")
result=$(printf '%s\n' "$dom" | sed -n '/<pre id="result">/,/<\/pre>/p')
printf '%s\n' "$result"

fail=0
for width in 700 1280 print; do
  count=$(printf '%s\n' "$result" | sed -n "s/.*$width figures \([0-9]*\).*/\1/p")
  if [ -z "$count" ] || [ "$count" -lt 4 ]; then echo "FAIL: $width px: expected at least 4 figures"; fail=1; fi
  if ! printf '%s\n' "$result" | grep -q "^$width requests 0$"; then echo "FAIL: $width px: the report requested resources"; fail=1; fi
  if ! printf '%s\n' "$result" | grep -q "^$width fits$"; then echo "FAIL: $width px: something is cut off"; fail=1; fi
done
if ! printf '%s\n' "$result" | grep -q "^print rules [1-9]"; then echo "FAIL: no print rules found"; fail=1; fi
if printf '%s\n' "$result" | grep -q "EMPTY"; then echo "FAIL: a figure has no size"; fail=1; fi
if printf '%s\n' "$result" | grep -q "OVERLAP"; then echo "FAIL: text over text in a figure"; fail=1; fi
if printf '%s\n' "$result" | grep -q "not loaded"; then echo "FAIL: the report did not load"; fail=1; fi

# Printed: a PDF by the browser's own print engine, A4 with page numbers.
"$browser" --headless --no-sandbox --disable-gpu --allow-file-access-from-files \
  --no-pdf-header-footer --print-to-pdf="$work/report.pdf" "file://$work/demo/report.html" \
  2>> "$work/browser.log" > /dev/null
pages=$(python3 -c 'import re, sys; print(len(re.findall(rb"/Type\s*/Page(?!s)", open(sys.argv[1], "rb").read())))' "$work/report.pdf")
echo "printed: $pages pages"
if [ -z "$pages" ] || [ "$pages" -lt 3 ]; then echo "FAIL: the printed report has no pages"; fail=1; fi
exit $fail

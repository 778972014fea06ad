#!/usr/bin/env bash
# Headless-browser check of the HTML report (CTest label: cli).
#   render_check.sh HELPER OUT_DIR
# Writes a report from the synthetic sample (HELPER write), opens it in headless Debian chromium, dumps the DOM
# after the page's script ran and checks it (HELPER check), once plainly and once through a link to the third site
# (whose section must then be open), and takes a screenshot OUT_DIR/report.png to look at.
set -euo pipefail
helper=$1
out=$2
browser=${CHROMIUM:-/usr/bin/chromium}
if [[ ! -x $browser ]]; then
  echo "FAIL: $browser not found: install Debian's chromium (apt-get install chromium) to run the report render test" >&2
  exit 1
fi
rm -rf "$out"
mkdir -p "$out"
"$helper" write "$out"
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
run_browser() {
  timeout 120 "$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync --disable-dev-shm-usage \
    --user-data-dir="$profile" "$@" 2>>"$out/chromium.log"
}
url="file://$out/report.html"
run_browser --dump-dom "$url" >"$out/dom.html"
expected=$("$helper" expected-charts)
"$helper" check "$out/dom.html" "$expected"

# Following a link to a collapsed site opens its section (the page script reacts to the fragment).
run_browser --dump-dom "$url#site-c3" >"$out/dom-linked.html"
if ! grep -q '<details class="site" id="site-c3" data-key="c3 " open' "$out/dom-linked.html"; then
  echo "FAIL: opening report.html#site-c3 did not expand the section of site c3" >&2
  exit 1
fi

run_browser --screenshot="$out/report.png" --window-size=1400,2000 --hide-scrollbars "$url" >/dev/null
if [[ ! -s $out/report.png ]]; then
  echo "FAIL: chromium wrote no screenshot" >&2
  exit 1
fi
# A blank 1400x2000 page compresses to a few kB; the header, tables and charts make it far larger.
size=$(stat -c %s "$out/report.png")
if (( size < 40000 )); then
  echo "FAIL: screenshot $out/report.png is only $size bytes: the page looks empty" >&2
  exit 1
fi
echo "report rendered: $out/report.png ($size bytes)"

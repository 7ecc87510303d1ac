#!/usr/bin/env bash
# Writes a report with the quarry binary, opens it in headless Chromium (Debian's package),
# and checks that the browser parsed both inline figures and the equilibria table and that
# the page it drew is not blank. Usage: tests/report_in_browser.sh BINARY [PNG]
# Needs: chromium, imagemagick (Debian packages); /usr/bin/identify, not a stand-in.
set -euo pipefail
bin=${1:?usage: report_in_browser.sh BINARY [PNG]}
tmp=$(mktemp -d)
shot=${2:-$(mktemp -d)/quarry-report.png}
trap 'rm -rf "$tmp"' EXIT
browser=$(command -v chromium || command -v chromium-browser || true)
[ -n "$browser" ] || { echo "no chromium: apt-get install chromium"; exit 1; }

html=$tmp/report.html
"$bin" report lotka-volterra --harvest x:proportional:E=0.2 --price x=2 --cost x=1 \
  --title 'Browser check <b>&"' --out "$html" >"$tmp/report.log"
grep -q 'not a stock assessment' "$tmp/report.log" || { echo "no caution in the output"; exit 1; }

flags=(--headless --no-sandbox --disable-gpu --disable-background-networking --no-first-run
       --disable-extensions --hide-scrollbars --user-data-dir="$tmp/profile")
# What the browser made of the page: both figures and the table must be in its DOM, and the
# hostile title must have stayed text.
timeout 120 "$browser" "${flags[@]}" --dump-dom "file://$html" >"$tmp/dom.html" 2>"$tmp/chromium.log" \
  || { echo "chromium failed:"; tail -20 "$tmp/chromium.log"; exit 1; }
svgs=$(grep -o '<svg ' "$tmp/dom.html" | wc -l)
[ "$svgs" -eq 2 ] || { echo "expected 2 inline figures in the DOM, found $svgs"; exit 1; }
grep -q '<table class="equilibria">' "$tmp/dom.html" || { echo "no equilibria table in the DOM"; exit 1; }
if grep -q '<b>&' "$tmp/dom.html"; then echo "the title was not escaped"; exit 1; fi

timeout 120 "$browser" "${flags[@]}" --screenshot="$shot" --window-size=1200,1600 "file://$html" \
  >>"$tmp/chromium.log" 2>&1 || { echo "chromium failed:"; tail -20 "$tmp/chromium.log"; exit 1; }
[ -s "$shot" ] || { echo "no screenshot"; tail -20 "$tmp/chromium.log"; exit 1; }
size=$(/usr/bin/identify -format '%wx%h' "$shot")
colours=$(/usr/bin/identify -format '%k' "$shot")
spread=$(/usr/bin/identify -format '%[fx:standard_deviation]' "$shot")
echo "screenshot $shot: $size, $colours distinct colours, standard deviation $spread"
[ "$size" = 1200x1600 ] || { echo "unexpected screenshot size"; exit 1; }
if [ "$colours" -lt 50 ] || awk -v s="$spread" 'BEGIN { exit !(s < 0.03) }'; then
  echo "the page looks blank"; exit 1
fi
# The lower half holds the phase portrait: it must not be blank either.
lower=$(/usr/bin/convert "$shot" -crop 1200x800+0+800 +repage -format '%k' info:)
[ "$lower" -ge 50 ] || { echo "the lower half of the page looks blank ($lower colours)"; exit 1; }
echo "report in browser: ok"

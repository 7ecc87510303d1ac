#!/usr/bin/env bash
# Starts the app under Xvfb (Mesa's software OpenGL, no GPU), takes a screenshot, and checks
# that the window came up with a non-blank plane. Usage: tests/app_under_xvfb.sh BINARY [PNG]
# Needs: xvfb libxcursor1 libxi6 libxkbcommon-x11-0 imagemagick xdotool (Debian packages).
set -euo pipefail
bin=${1:?usage: app_under_xvfb.sh BINARY [PNG]}
shot=${2:-$(mktemp -d)/quarry-app.png}
tmp=$(mktemp -d)
display=:$((90 + RANDOM % 9))
Xvfb "$display" -screen 0 1280x800x24 -nolisten tcp >"$tmp/xvfb.log" 2>&1 &
xvfb=$!
cleanup() { kill "${app:-}" 2>/dev/null || true; kill "$xvfb" 2>/dev/null || true; }
trap cleanup EXIT
sleep 2
DISPLAY=$display XDG_RUNTIME_DIR=$tmp LIBGL_ALWAYS_SOFTWARE=1 "$bin" >"$tmp/app.log" 2>&1 &
app=$!
# Wait for the window (title starts with Quarry), up to 60 s.
for _ in $(seq 60); do
  if DISPLAY=$display xdotool search --name '^Quarry' >/dev/null 2>&1; then break; fi
  if ! kill -0 "$app" 2>/dev/null; then echo "the app exited early:"; cat "$tmp/app.log"; exit 1; fi
  sleep 1
done
DISPLAY=$display xdotool search --name '^Quarry' >/dev/null || { echo "no Quarry window"; cat "$tmp/app.log"; exit 1; }
sleep 6
DISPLAY=$display import -window root "$shot"
colours=$(/usr/bin/identify -format '%k' "$shot")
echo "screenshot $shot: $colours distinct colours"
if [ "$colours" -lt 50 ]; then echo "the window looks blank"; exit 1; fi

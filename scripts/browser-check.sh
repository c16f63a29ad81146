#!/usr/bin/env bash
# Open a beatfold report.html in headless Chromium and check it like a reader would:
#   - the page's own self-check (loaded with #selftest) clicks an embedding point other than the
#     beat already shown, checks that the selection, waveform and time moved to that point,
#     selects a time range and checks that beats are highlighted, and counts the figures; it must
#     report PASS;
#   - the same self-check must FAIL on a deliberately broken copy of the page whose click handler
#     does nothing (so a self-check that cannot fail is caught);
#   - the browser console stays silent (the page logs nothing, so any console line, an uncaught
#     error included, fails the check);
#   - every figure is present as inline SVG, and the page loads nothing from outside;
#   - a screenshot is saved under target/ (CI artefact).
# Usage: scripts/browser-check.sh [REPORT.html] [OUT_DIR]   (defaults: target/ci-demo/report.html,
# target/browser-check). Installs Debian's chromium with apt-get when it is missing and fails
# loudly when it cannot be installed or started.
set -euo pipefail
cd "$(dirname "$0")/.."

report=${1:-target/ci-demo/report.html}
out_dir=${2:-target/browser-check}
start_s=$(date +%s)

if [[ ! -s "$report" ]]; then
    echo "browser-check: FAILED: report $report is missing or empty" >&2
    exit 1
fi

find_chromium() {
    command -v chromium || command -v chromium-browser || true
}

browser=$(find_chromium)
if [[ -z "$browser" ]]; then
    echo "== installing chromium (Debian package)"
    if [[ $(id -u) -eq 0 ]]; then
        as_root=()
    elif sudo -n true 2>/dev/null; then
        as_root=(sudo -n)
    else
        echo "browser-check: FAILED: chromium is not installed and there is no root or password-less sudo to install it" >&2
        exit 1
    fi
    export DEBIAN_FRONTEND=noninteractive
    if ! "${as_root[@]}" apt-get install -y --no-install-recommends chromium; then
        "${as_root[@]}" apt-get update
        "${as_root[@]}" apt-get install -y --no-install-recommends chromium || {
            echo "browser-check: FAILED: apt-get could not install chromium" >&2
            exit 1
        }
    fi
    browser=$(find_chromium)
    if [[ -z "$browser" ]]; then
        echo "browser-check: FAILED: chromium installed but not found on PATH" >&2
        exit 1
    fi
fi

mkdir -p "$out_dir"
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
url="file://$(realpath "$report")#selftest"
flags=(--headless --disable-gpu --no-first-run --no-default-browser-check
    --user-data-dir="$profile" --enable-logging=stderr --v=0 --virtual-time-budget=5000)
# Chromium refuses to run as root inside its sandbox.
if [[ $(id -u) -eq 0 ]]; then
    flags+=(--no-sandbox)
fi

echo "== $("$browser" --version 2>/dev/null | head -1) on $url"
if ! timeout 180 "$browser" "${flags[@]}" --dump-dom "$url" >"$out_dir/dom.html" 2>"$out_dir/console.log"; then
    echo "browser-check: FAILED: chromium did not start or did not finish (log: $out_dir/console.log)" >&2
    tail -20 "$out_dir/console.log" >&2 || true
    exit 1
fi
if ! timeout 180 "$browser" "${flags[@]}" --hide-scrollbars --window-size=1400,2200 \
    --screenshot="$(realpath "$out_dir")/report.png" "$url" >/dev/null 2>"$out_dir/screenshot.log"; then
    echo "browser-check: FAILED: chromium could not take the screenshot (log: $out_dir/screenshot.log)" >&2
    exit 1
fi

python3 scripts/browser_check.py --report "$report" --dom "$out_dir/dom.html" \
    --console "$out_dir/console.log" --screenshot "$out_dir/report.png"

# The self-check must be able to fail: the same page with its click handler turned into a no-op.
broken="$out_dir/report-broken-click.html"
python3 - "$report" "$broken" <<'PY'
import sys
page = open(sys.argv[1], encoding="utf-8").read()
handler = "sc.addEventListener('click',function(ev){"
if page.count(handler) != 1:
    sys.exit("browser-check: FAILED: click handler not found in the page, cannot build the broken copy")
page = page.replace(handler, handler + "return;", 1)
open(sys.argv[2], "w", encoding="utf-8").write(page)
PY
if ! timeout 180 "$browser" "${flags[@]}" --dump-dom "file://$(realpath "$broken")#selftest" \
    >"$out_dir/dom-broken.html" 2>"$out_dir/console-broken.log"; then
    echo "browser-check: FAILED: chromium did not finish on the broken page" >&2
    exit 1
fi
if ! grep -q 'id="selftest-result" data-status="fail"' "$out_dir/dom-broken.html"; then
    echo "browser-check: FAILED: the self-check did not fail on a page whose click handler is broken" >&2
    exit 1
fi
echo "broken click handler: the self-check fails, as it must"
echo "browser-check passed in $(( $(date +%s) - start_s )) s; screenshot: $out_dir/report.png"

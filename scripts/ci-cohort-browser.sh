#!/usr/bin/env bash
# Open a cohort page (cohort.html) in headless Chromium and check that researchers can use it:
#   - the page's own self-test (loaded with #selftest) sorts the table by heart rate both ways,
#     filters it by a verdict, recolours the shared embedding and hovers a point; it must say PASS;
#   - independently of that, scripts/cohort_browser_check.py reads the DOM Chromium dumped after
#     the self-test and the data inside the page: the shown rows must be exactly the records
#     with the filtered verdict, in descending heart rate; the embedding has one point per
#     placed record; the console stays silent; nothing is loaded from outside the page.
# Usage: scripts/ci-cohort-browser.sh [BEATFOLD] [OUT_DIR]  (defaults: target/release/beatfold,
# target/cohort-browser). Makes a small synthetic cohort (24 records of 30 s in three groups,
# with labels) unless OUT_DIR/cohort/cohort.html exists. Fails loudly without chromium.
set -euo pipefail
cd "$(dirname "$0")/.."
bin=${1:-target/release/beatfold}
out_dir=${2:-target/cohort-browser}
browser=$(command -v chromium || command -v chromium-browser || true)
if [[ -z "$browser" ]]; then
    echo "ci-cohort-browser: FAILED: chromium not found (scripts/browser-check.sh installs it)" >&2
    exit 1
fi
mkdir -p "$out_dir"
page="$out_dir/cohort/cohort.html"
if [[ ! -s "$page" ]]; then
    rm -rf "$out_dir/in" "$out_dir/cohort"
    mkdir -p "$out_dir/in"
    echo "path,group" >"$out_dir/in/list.csv"
    : >"$out_dir/in/labels.csv"
    scen=(resting telemetry-night ambulatory-noisy)
    for i in $(seq 0 23); do
        s=${scen[$((i % 3))]}
        "$bin" synth --out "$out_dir/in/r$i.csv" --minutes 0.5 --scenario "$s" --seed "$((i + 1))" -q
        echo "r$i.csv,$s" >>"$out_dir/in/list.csv"
        echo "r$i,$([[ $s == resting ]] && echo N || echo A)" >>"$out_dir/in/labels.csv"
    done
    echo "r3" >"$out_dir/in/full.txt"
    "$bin" cohort "$out_dir/in/list.csv" --out "$out_dir/cohort" --jobs 2 --quiet \
        --labels "$out_dir/in/labels.csv" --label-map N=regular,A=irregular --full-for "$out_dir/in/full.txt"
fi
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
flags=(--headless --disable-gpu --no-first-run --no-default-browser-check
    --user-data-dir="$profile" --enable-logging=stderr --v=0 --virtual-time-budget=5000)
if [[ $(id -u) -eq 0 ]]; then
    flags+=(--no-sandbox)
fi
url="file://$(realpath "$page")#selftest"
if ! timeout 180 "$browser" "${flags[@]}" --dump-dom "$url" >"$out_dir/dom.html" 2>"$out_dir/console.log"; then
    echo "ci-cohort-browser: FAILED: chromium did not finish (log: $out_dir/console.log)" >&2
    exit 1
fi
python3 scripts/cohort_browser_check.py --page "$page" --dom "$out_dir/dom.html" --console "$out_dir/console.log"
echo "ci-cohort-browser passed"

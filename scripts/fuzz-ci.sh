#!/usr/bin/env bash
# Runs every reader's fuzz target (fuzz/, cargo-fuzz + libFuzzer) for a bounded time each.
#
# Only the stable toolchain is installed: RUSTC_BOOTSTRAP=1 lets cargo-fuzz pass its unstable
# flags, and `-s none` (no sanitizer; beatfold is safe Rust, overflow checks and debug assertions
# are on in fuzz/Cargo.toml) avoids the nightly-only sanitizer runtimes.
#
# Fails LOUDLY, with a non-zero exit, when cargo-fuzz cannot be installed, a target does not
# build, a target does not start or run, or a target finds a crash. Each run works on a copy of
# the committed seed corpus (fuzz/corpus/<target>/), so the repository is not changed; crashing
# inputs are left in fuzz/artifacts/<target>/ (copy them to tests/data/fuzz-regressions/ and add
# a test in tests/fuzz_regressions.rs).
#
# Usage: scripts/fuzz-ci.sh [SECONDS_PER_TARGET] (default 30; env FUZZ_SECONDS also works).
set -euo pipefail
cd "$(dirname "$0")/.."

SECS="${1:-${FUZZ_SECONDS:-30}}"
TARGETS=(csv edf physionet_header physionet_signal mit_annotations annotations_csv hdf5 points_csv model_h5 cohort_manifest config_json)

fail() {
    echo "FUZZ FAILED: $*" >&2
    exit 1
}

if ! cargo fuzz --version >/dev/null 2>&1; then
    echo "== installing cargo-fuzz (crates.io)"
    cargo install cargo-fuzz --locked || fail "cargo-fuzz is not installed and cannot be installed"
fi
cargo fuzz --version

export RUSTC_BOOTSTRAP=1
cd fuzz
echo "== building fuzz targets"
cargo fuzz build -s none || fail "fuzz targets do not build"

LOGS="$(mktemp -d)"
status=0
for t in "${TARGETS[@]}"; do
    [ -d "corpus/$t" ] || fail "no seed corpus fuzz/corpus/$t"
    work="$(mktemp -d)"
    cp corpus/"$t"/* "$work"/
    log="$LOGS/$t.log"
    echo "== fuzz $t for ${SECS}s"
    if ! cargo fuzz run -s none "$t" "$work" -- \
        -max_total_time="$SECS" -rss_limit_mb=2048 -max_len=65536 -timeout=10 >"$log" 2>&1; then
        echo "FUZZ FAILED: target $t crashed or could not run; last lines of its log:" >&2
        tail -n 40 "$log" >&2
        status=1
        continue
    fi
    # A run that did not really start has no libFuzzer summary line.
    done_line="$(grep -E '^Done [0-9]+ runs in [0-9]+ second' "$log" || true)"
    if [ -z "$done_line" ]; then
        echo "FUZZ FAILED: target $t printed no libFuzzer summary (did it start?); log:" >&2
        tail -n 40 "$log" >&2
        status=1
        continue
    fi
    cov="$(grep -E '#[0-9]+' "$log" | tail -n 1 | grep -oE 'cov: [0-9]+' || echo 'cov: ?')"
    echo "   $t: $done_line, $cov"
    rm -rf "$work"
done
[ "$status" -eq 0 ] || fail "at least one target failed (see above)"
echo "fuzz: all ${#TARGETS[@]} targets ran ${SECS}s each without a crash"

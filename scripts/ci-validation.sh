#!/usr/bin/env bash
# Accuracy gates on the shared open data, and the generated validation pages kept in step.
#
#   1. MIT-BIH Arrhythmia Database (../shared/data/mitdb): decoding against records.csv, beat
#      detection by the EC57 rules (pooled Se and +P ≥ 99.5 %), irregular-rhythm screen by
#      duration (Se and Sp ≥ 95 %); regenerates docs/validation-mitdb.md.
#   2. Noise stress test (../shared/data/nstdb), both leads fused by vote: Se/+P per SNR (12 dB: ≥ 99 / 98 %; 6 dB, pooled
#      over 118e06 and 119e06: ≥ 97 / 95 %) and the quality index at 6 dB (≥ 80 % of the false
#      detections in stretches marked unreadable, ≤ 5 % of the clean time marked); regenerates
#      docs/validation-noise.md.
#   3. Short single-lead records (../shared/data/cinc2017-sample), when the folder is there: the
#      record verdict, irregular vs rest, gated at SHORT_MIN_SE / SHORT_MIN_SP when they are set.
#   4. The regenerated pages must equal the committed ones (git diff --exit-code).
#
# Exits non-zero, naming what failed, when a gate is missed, a command fails or a page changed.
# Usage: scripts/ci-validation.sh [SHARED_DATA_DIR]   (default ../shared/data beside the repo).
# Gates can be overridden by environment variables (the defaults are the project's targets;
# lower them only with a note in docs/validation.md):
#   GATE_SE GATE_PPV (99.5 99.5), GATE_DUR_SE GATE_DUR_SP (95 95, the rhythm screen's duration target),
#   NOISE_GATES ("12:99:98 6:97:95"), QUALITY_GATE ("6:80:5"),
#   BEATFOLD_CONFIG (a config JSON applied to every detection, e.g. to show a broken detector fails).
set -uo pipefail
cd "$(dirname "$0")/.."
data=${1:-../shared/data}
start_s=$(date +%s)
failed=()

cargo build --release --example validate_mitdb --example validate_noise --example validate_short \
    || { echo "ci-validation: FAILED: the validation examples do not build" >&2; exit 1; }
bin=target/release/examples
cfg=()
if [[ -n "${BEATFOLD_CONFIG:-}" ]]; then
    cfg=(--config "$BEATFOLD_CONFIG")
fi

echo "== MIT-BIH: $data/mitdb"
if ! "$bin/validate_mitdb" "$data/mitdb" --out docs/validation-mitdb.md "${cfg[@]}" \
    --gate-se "${GATE_SE:-99.5}" --gate-ppv "${GATE_PPV:-99.5}" \
    --gate-duration-se "${GATE_DUR_SE:-95}" --gate-duration-sp "${GATE_DUR_SP:-95}" >/dev/null; then
    failed+=("MIT-BIH validation (gates or decoding)")
fi

echo "== noise stress test: $data/nstdb"
noise_args=()
for g in ${NOISE_GATES:-12:99:98 6:97:95}; do noise_args+=(--gate "$g"); done
if ! "$bin/validate_noise" "$data/nstdb" --out docs/validation-noise.md "${cfg[@]}" \
    "${noise_args[@]}" --gate-quality "${QUALITY_GATE:-6:80:5}" >/dev/null; then
    failed+=("noise stress test gates")
fi

if [[ -d "$data/cinc2017-sample" ]]; then
    echo "== short records: $data/cinc2017-sample"
    short_args=()
    [[ -n "${SHORT_MIN_SE:-}" ]] && short_args+=(--min-se "$SHORT_MIN_SE")
    [[ -n "${SHORT_MIN_SP:-}" ]] && short_args+=(--min-sp "$SHORT_MIN_SP")
    if ! "$bin/validate_short" "$data/cinc2017-sample" "${short_args[@]}" >/dev/null; then
        failed+=("short-record verdict gates")
    fi
fi

if [[ -z "${BEATFOLD_CONFIG:-}" ]]; then
    echo "== generated pages equal the committed ones"
    if ! git diff --exit-code --stat -- docs/validation-mitdb.md docs/validation-noise.md; then
        failed+=("a generated validation page differs from the committed one (rerun this script and commit the pages)")
    fi
else
    # A run with a user config is a what-if: put the committed pages back.
    git checkout -- docs/validation-mitdb.md docs/validation-noise.md 2>/dev/null || true
fi

echo "ci-validation took $(( $(date +%s) - start_s )) s"
if (( ${#failed[@]} )); then
    echo "ci-validation: FAILED:" >&2
    for f in "${failed[@]}"; do echo "  - $f" >&2; done
    exit 1
fi
echo "ci-validation: all gates met, pages unchanged"

#!/usr/bin/env bash
# Beat-class separation on the shared MIT-BIH folder: reruns the validation page and fails when
# the committed page differs (every number on it comes from this command).
# Usage: scripts/ci-separate.sh [MITDB_FOLDER]   (default ../shared/data/mitdb)
# Run time after a warm release build: 35.6 s wall (69.9 s CPU) on 2 cores at load average ~4.5
# (2026-12-04; inter-patient 12.7 s, within-record 22.9 s); 305 s wall including the release
# build at load ~8 (see docs/performance.md).
set -euo pipefail
cd "$(dirname "$0")/.."
data="${1:-../shared/data/mitdb}"
if [ ! -d "$data" ]; then
  echo "ci-separate: no data folder $data; skipped"
  exit 0
fi
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
cargo run --release --quiet --example validate_separate -- "$data" --out "$tmp/validation-separate.md"
diff -u docs/validation-separate.md "$tmp/validation-separate.md"
echo "ci-separate: page reproduced"

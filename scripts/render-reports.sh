#!/usr/bin/env bash
# Renders the report of every demo model in headless Chromium and fails on load errors or
# missing pictures (see scripts/render-reports.py); screenshots go to target/report-shots/.
#
#   scripts/render-reports.sh            # all demos
#   scripts/render-reports.sh bushing    # some of them
#
# Installs Debian's chromium and chromium-driver when they are absent (needs apt and root).
set -euo pipefail
cd "$(dirname "$0")/.."

if ! command -v chromium >/dev/null || ! command -v chromedriver >/dev/null; then
    echo "installing Debian's chromium and chromium-driver" >&2
    apt-get update -qq
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium chromium-driver >/dev/null
fi

cargo build --release --locked -p fieldgrade
models=("$@")
if [ ${#models[@]} -eq 0 ]; then
    models=()
    for f in fixtures/models/*.toml; do models+=("$(basename "$f" .toml)"); done
fi
folders=()
for m in "${models[@]}"; do
    dir="target/reports/$m"
    rm -rf "$dir"
    target/release/fieldgrade check "fixtures/models/$m.toml" --out "$dir" >/dev/null
    folders+=("$dir")
done
python3 scripts/render-reports.py target/report-shots "${folders[@]}"

#!/usr/bin/env bash
# Builds redress and runs its demo: generated programme material, passed through a simulated
# link, equalized, with the error before and after. Needs no sound card and no audio files.
# Installs what a fresh Debian/Ubuntu machine lacks (as root or with sudo). Extra arguments go
# to `redress demo`, e.g. `bash scripts/demo.sh configs/quarry_hop.toml`.
set -euo pipefail
cd "$(dirname "$0")/.."
# shellcheck source=lib/ensure_tools.sh
source scripts/lib/ensure_tools.sh

ensure_packages "${BUILD_PACKAGES[@]}"
ensure_cargo
cargo run --release --quiet -- demo "$@"

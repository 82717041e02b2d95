#!/usr/bin/env bash
# Builds the Debian package into target/debian/: the binary, its manual pages and bash/zsh/fish
# completions (written by the binary itself from its command-line definition, so they describe
# exactly the options it has), the three systemd units, the example configs and the README.
#
#   bash scripts/build-deb.sh [PROFILE]     # PROFILE: release (default) or dev (quicker, tests)
#
# Needs cargo-deb (`cargo install cargo-deb --locked`; installed here when missing). Prints the
# package's path last.
set -euo pipefail
cd "$(dirname "$0")/.."
profile=${1:-release}
if ! cargo deb --version >/dev/null 2>&1; then
    echo "installing cargo-deb" >&2
    cargo install cargo-deb --locked >&2
fi
cargo build --profile "$profile" --bin redress >&2
case $profile in
    dev) binary=target/debug/redress ;;
    *) binary=target/$profile/redress ;;
esac
rm -rf target/package-files
"$binary" package-files target/package-files
# Debian policy 12.1: manual pages are installed compressed.
gzip -9n target/package-files/*.1
cargo deb --no-build --profile "$profile" 2>&1 | tail -1 >&2
ls -t target/debian/redress_*.deb | head -1

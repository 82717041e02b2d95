#!/usr/bin/env bash
# Builds redress and runs its demo, with no sound card and no audio files:
#  1. offline: generated programme material through a simulated link, equalized, error before
#     and after (`redress demo`; extra arguments go to it, e.g. configs/quarry_hop.toml);
#  2. live: the real service (`redress run --simulate`) on a real-time simulated link, started on
#     a rough first measurement of the link, then re-configured while it runs (SIGHUP) with the
#     careful one; `redress status` before and after shows the error, the swap and the guards.
# Installs what a fresh Debian/Ubuntu machine lacks (as root or with sudo).
set -euo pipefail
cd "$(dirname "$0")/.."
# shellcheck source=lib/ensure_tools.sh
source scripts/lib/ensure_tools.sh

ensure_packages "${BUILD_PACKAGES[@]}"
ensure_cargo
cargo build --release --quiet
redress=target/release/redress

echo "=== 1. offline: analyse, simulate, equalize ==="
"$redress" demo "$@"

echo
echo "=== 2. live: the service on a real-time simulated link ==="
work=$(mktemp -d)
service=""
cleanup() {
    # Stop the service we started (by PID), then remove the scratch directory.
    if [ -n "$service" ] && kill -0 "$service" 2>/dev/null; then kill -TERM "$service"; wait "$service" || true; fi
    rm -rf "$work"
}
trap cleanup EXIT
cp configs/echo_line_first_pass.toml "$work/link.toml"
socket="$work/run/status.sock"
"$redress" run "$work/link.toml" --simulate --true-link configs/echo_line.toml \
    --socket "$socket" --for 30 2> "$work/service.log" &
service=$!
for _ in $(seq 100); do "$redress" status --socket "$socket" >/dev/null 2>&1 && break; sleep 0.1; done
sleep 2
echo "--- status on the first, rough measurement (configs/echo_line_first_pass.toml):"
"$redress" status --socket "$socket"
echo
echo "--- the link is re-measured: configs/echo_line.toml replaces the config, then SIGHUP"
cp configs/echo_line.toml "$work/link.toml"
kill -HUP "$service"
sleep 4
echo "--- status after the reload:"
"$redress" status --socket "$socket"
kill -TERM "$service"
wait "$service"
echo "--- the service's log (exit status $?):"
cat "$work/service.log"

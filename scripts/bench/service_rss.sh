#!/bin/bash
# Resident memory of the running service: starts `redress run --simulate CONFIG` (default: the
# eight-channel order-32 festival config beside this script) for SECONDS (default 10), sends it
# a reload (SIGHUP) every second, samples VmRSS from /proc every half second, and prints the
# first and last samples and the peak (VmHWM). Stops the service by its PID if it outlives
# its --for.
# Usage: scripts/bench/service_rss.sh [CONFIG] [SECONDS]
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
repo=$(cd "$here/../.." && pwd)
config=${1:-$here/festival_eight_feeds.toml}
seconds=${2:-10}
cargo build --release --quiet --manifest-path "$repo/Cargo.toml"
work=$(mktemp -d)
"$repo/target/release/redress" run --simulate "$config" --for "$seconds" -q \
    --socket "$work/status.sock" &
pid=$!
cleanup() { kill "$pid" 2>/dev/null || true; rm -rf "$work"; }
trap cleanup EXIT
rss() { awk '/^VmRSS/ {print $2}' "/proc/$pid/status" 2>/dev/null; }
hwm() { awk '/^VmHWM/ {print $2}' "/proc/$pid/status" 2>/dev/null; }
sleep 1
first=$(rss); last=$first; peak=$(hwm); samples=0; reloads=0
end=$((SECONDS + seconds - 2))
while [ "$SECONDS" -lt "$end" ] && kill -0 "$pid" 2>/dev/null; do
    sleep 0.5
    now=$(rss) && [ -n "$now" ] && last=$now && samples=$((samples + 1))
    peak=$(hwm || echo "$peak")
    if [ $((samples % 2)) = 0 ]; then kill -HUP "$pid" 2>/dev/null && reloads=$((reloads + 1)); fi
done
echo "service RSS (KiB): first $first, last $last, peak $peak; $reloads reloads, $samples samples"
wait "$pid" || true

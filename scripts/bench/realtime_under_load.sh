#!/bin/bash
# Callback time of the eight-feed festival link (8 channels, order 32) at 64-frame blocks with
# two CPU-bound threads at ordinary priority beside it, first at ordinary priority, then with the
# timed thread at SCHED_FIFO 70 as the service's callback threads ask: the percentiles and the
# deadlines missed of each (a 64-frame block lasts 1333 µs at 48 kHz). The second run needs
# root or RLIMIT_RTPRIO ≥ 70; without either the report says the request was refused.
# Usage: scripts/bench/realtime_under_load.sh [BLOCKS, default 20000] [extra bench options]
set -euo pipefail
repo=$(cd "$(dirname "$0")/../.." && pwd)
blocks=${1:-20000}
shift || true
cargo build --release --quiet --manifest-path "$repo/Cargo.toml"
for priority in 0 70; do
    "$repo/target/release/redress" bench "$repo/scripts/bench/festival_eight_feeds.toml" \
        --block-frames 64 --blocks "$blocks" --cpu-load 2 --callback-priority "$priority" "$@"
done

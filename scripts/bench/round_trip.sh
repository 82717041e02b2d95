#!/bin/bash
# Measures redress's device round trip on a machine without a sound card: starts a private
# PulseAudio (tests/audio/start-paced-audio.sh), loops its null sink eq_out back through the
# sink's monitor (tests/audio/alsa-loopback.conf), runs `redress bench CONFIG --round-trip`
# through that loop, and stops the server by the PIDs it recorded.
# Usage: scripts/bench/round_trip.sh [CONFIG] [extra redress bench options, e.g. --json]
# Needs the Debian packages pulseaudio, pulseaudio-utils and libasound2-plugins.
set -euo pipefail
repo=$(cd "$(dirname "$0")/../.." && pwd)
config=${1:-$repo/configs/echo_line.toml}
shift || true
cargo build --release --quiet --manifest-path "$repo/Cargo.toml"
runtime=$(bash "$repo/tests/audio/start-paced-audio.sh" | sed -n 's/^XDG_RUNTIME_DIR=//p')
stop() { XDG_RUNTIME_DIR="$runtime" bash "$repo/tests/audio/stop-paced-audio.sh"; }
trap stop EXIT
XDG_RUNTIME_DIR="$runtime" ALSA_CONFIG_PATH="$repo/tests/audio/alsa-loopback.conf" \
    "$repo/target/release/redress" bench "$config" --round-trip \
    --input-device loop_capture --output-device loop_play "$@"

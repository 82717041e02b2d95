#!/bin/bash
# The ring between the capture and playback callbacks on the paced ALSA devices (the private
# PulseAudio of tests/audio/start-paced-audio.sh through the ALSA pulse plugin): runs
# `redress run` on configs/echo_line.toml at [audio] buffer_frames = PERIOD for SECONDS with
# LOAD busy shell loops beside it, reads `redress status --json` five times a second, and
# prints the lowest, median-lowest and highest ring fill the playback callback found (frames),
# the xruns and the stream errors. The lowest fill is the margin the ring really kept.
# Usage: scripts/bench/ring_fill.sh [PERIOD, default 256] [SECONDS, default 15] [LOAD, default 0]
# Needs the Debian packages pulseaudio, pulseaudio-utils and libasound2-plugins. What it
# measures is the pulse plugin and sound server's pacing, not a sound card's.
set -euo pipefail
repo=$(cd "$(dirname "$0")/../.." && pwd)
period=${1:-256}
seconds=${2:-15}
load=${3:-0}
cargo build --quiet --manifest-path "$repo/Cargo.toml"
bin="$repo/target/debug/redress"
work=$(mktemp -d)
runtime=$(bash "$repo/tests/audio/start-paced-audio.sh" | sed -n 's/^XDG_RUNTIME_DIR=//p')
busy=()
service=
stop() {
    for p in "${busy[@]}"; do kill "$p" 2>/dev/null || true; done
    [ -n "$service" ] && kill "$service" 2>/dev/null || true
    XDG_RUNTIME_DIR="$runtime" bash "$repo/tests/audio/stop-paced-audio.sh"
}
trap stop EXIT
{ cat "$repo/configs/echo_line.toml"
  printf '\n[audio]\ninput_device = "eq_in"\noutput_device = "eq_out"\nbuffer_frames = %s\n' "$period"
} > "$work/link.toml"
export XDG_RUNTIME_DIR="$runtime" ALSA_CONFIG_PATH="$repo/tests/audio/alsa-paced-device.conf"
for _ in $(seq "$load"); do sh -c 'while :; do :; done' & busy+=($!); done
"$bin" run "$work/link.toml" --for $((seconds + 2)) --socket "$work/s.sock" 2>"$work/run.log" &
service=$!
sleep 1.5
end=$((SECONDS + seconds - 1))
while [ $SECONDS -lt $end ]; do
    "$bin" status --json --socket "$work/s.sock" >>"$work/status.jsonl" 2>/dev/null || true
    echo >>"$work/status.jsonl"
    sleep 0.2
done
wait "$service" || true
service=
python3 - "$work/status.jsonl" <<'PY'
import json, sys
docs = [json.loads(l) for l in open(sys.argv[1]) if l.strip()]
lows = sorted(d["engine"]["ring_fill_low_frames"] for d in docs
              if d["engine"].get("ring_fill_low_frames") is not None)
highs = [d["engine"]["ring_fill_high_frames"] for d in docs
         if d["engine"].get("ring_fill_high_frames") is not None]
last = docs[-1]
e = last["engine"]
print(last["audio"]["description"])
print(f"{len(docs)} status reads; ring fill before a playback callback: lowest {lows[0]}, "
      f"median of the lows between readings {lows[len(lows) // 2]}, highest {max(highs)} frames")
print(f"input overruns {e['input_overruns']} samples, output underruns {e['output_underruns']} "
      f"samples, stream errors {last['audio']['stream_errors']}")
for t in last["audio"]["realtime"]["threads"]:
    print(f"{t['thread']}: {t['policy']} {t['priority']}")
PY
rm -rf "$work"

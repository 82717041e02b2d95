#!/bin/bash
# Scale figures for long channels (release build):
#  - `redress check` on mixed-phase FIR channels of 1024 and 4096 taps (a decaying random
#    response behind a weaker first arrival, generated here with a fixed seed): wall time and
#    peak resident memory (/usr/bin/time -v);
#  - `redress identify` on a 60 s stereo sweep at 48 kHz through the echo line at 60 dB SNR;
#  - the equalized error on generated programme (`redress demo`, 10 s) through the 1024-tap
#    room response of tests/fixtures/long_channels/room_1024.json (pyroomacoustics, 16 kHz; its
#    direct sound arrives 190 samples in, behind fractional-delay pre-ringing),
#    for each method: the default minimum-phase substitute, the least-squares FIR (1024 and
#    4096 taps, delay searched within 30 ms: the direct sound itself is 12 ms late), and the
#    exact inverse of the same room made minimum phase by scipy (cap raised to 60 dB so the
#    exact inverse is allowed). `demo` measures the waveform error at the bulk delay only, so
#    the minimum-phase substitute, which leaves the room's 12 ms and its phase as an all-pass,
#    scores badly there by construction.
# Usage: scripts/bench/long_channels.sh
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
repo=$(cd "$here/../.." && pwd)
cargo build --release --quiet --manifest-path "$repo/Cargo.toml"
bin="$repo/target/release/redress"
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

measure() { # label, command…
    local label=$1; shift
    /usr/bin/time -v "$@" > "$work/out.txt" 2> "$work/time.txt" || true
    local wall rss
    wall=$(awk -F': ' '/Elapsed \(wall clock\)/ {print $2}' "$work/time.txt")
    rss=$(awk -F': ' '/Maximum resident set size/ {print $2}' "$work/time.txt")
    echo "$label: $wall wall, $rss kB peak resident"
}

python3 - "$work" <<'PY'
import json, math, random, sys
work = sys.argv[1]
def config(path, rate, b, inverse=""):
    with open(path, "w") as f:
        f.write(f"[link]\nsample_rate_hz = {rate}\nchannel_count = 1\n\n[[path]]\nlabel = \"long\"\n")
        f.write("channels = [0]\ndifference_equation = { b = [" + ", ".join(repr(x) for x in b) + "], a = [1.0] }\n")
        f.write(inverse)
for n in (1024, 4096):
    random.seed(n)
    tau = n / 6.0
    h = [1.2 * (random.random() - 0.5) * math.exp(-k / tau) for k in range(n)]
    h[0], h[3] = 0.5, 1.0
    config(f"{work}/mixed_{n}.toml", 48000, h)
PY
python3 - "$work" "$repo/tests/fixtures/long_channels/room_1024.json" <<'PY'
import json, sys
work, fixture = sys.argv[1], sys.argv[2]
room = json.load(open(fixture))
def config(name, b, inverse=""):
    with open(f"{work}/{name}.toml", "w") as f:
        f.write("[link]\nsample_rate_hz = 16000\nchannel_count = 1\n\n[[path]]\nlabel = \"room\"\n")
        f.write("channels = [0]\ndifference_equation = { b = [" + ", ".join(repr(x) for x in b) + "], a = [1.0] }\n")
        f.write(inverse)
config("room_minimum_phase_substitute", room["b"])
config("room_fir_1024", room["b"], "[path.inverse]\nmethod = \"least_squares_fir\"\nfir_taps = 1024\nfir_latency_budget_ms = 30.0\n")
config("room_fir_4096", room["b"], "[path.inverse]\nmethod = \"least_squares_fir\"\nfir_taps = 4096\nfir_latency_budget_ms = 30.0\n")
config("room_exact_of_minimum_phase", room["minimum_phase_b"], "[path.inverse]\nmethod = \"exact\"\nboost_cap_db = 60.0\n")
PY

for n in 1024 4096; do
    measure "check, mixed-phase FIR of $n taps" "$bin" check "$work/mixed_$n.toml"
    grep -E "built by|realization|boost cap" "$work/out.txt" | sed 's/^/    /'
done

"$bin" stimulus --seconds 60 --channels 2 "$work/sweep60.wav" > /dev/null
"$bin" simulate-recording "$repo/configs/echo_line.toml" "$work/sweep60.wav" "$work/rec60.wav" \
    --snr-db 60 --latency-ms 20 > /dev/null
measure "identify, 60 s stereo sweep at 48 kHz" "$bin" identify "$work/sweep60.wav" \
    "$work/rec60.wav" "$work/fit60.toml"
grep -E "delay|FIR model|equalized" "$work/out.txt" | sed 's/^/    /'

for name in room_minimum_phase_substitute room_fir_1024 room_fir_4096 room_exact_of_minimum_phase; do
    echo "demo, 1024-tap room, $name:"
    "$bin" demo --seconds 10 "$work/$name.toml" | grep -iE "error|before|after" | sed 's/^/    /'
done

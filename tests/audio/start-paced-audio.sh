#!/bin/bash
# Starts a private PulseAudio with two null sinks, so that the file devices of
# alsa-paced-device.conf run at real-time pace on a machine without a sound card.
#
# Prints one line on stdout, XDG_RUNTIME_DIR=<dir>; give that variable to every process that
# uses the paced devices (and to stop-paced-audio.sh). Every PID started here is written to
# <dir>/paced-audio.pids; stop everything with:  XDG_RUNTIME_DIR=<dir> stop-paced-audio.sh
# Needs the Debian packages pulseaudio, pulseaudio-utils and libasound2-plugins.
set -euo pipefail
export XDG_RUNTIME_DIR=${XDG_RUNTIME_DIR:-$(mktemp -d)}
mkdir -p "$XDG_RUNTIME_DIR" && chmod 700 "$XDG_RUNTIME_DIR"
pids="$XDG_RUNTIME_DIR/paced-audio.pids"
: > "$pids"
cat > "$XDG_RUNTIME_DIR/paced.pa" <<'PA'
load-module module-native-protocol-unix auth-anonymous=1
load-module module-null-sink sink_name=eq_out rate=48000 channels=2 format=float32le
load-module module-null-sink sink_name=eq_src rate=48000 channels=2 format=float32le
set-default-sink eq_out
set-default-source eq_src.monitor
PA
pulseaudio --daemonize=yes -n -F "$XDG_RUNTIME_DIR/paced.pa" --exit-idle-time=-1 \
  --disable-shm=yes --log-target=file:"$XDG_RUNTIME_DIR/pulseaudio.log" >&2
for _ in $(seq 50); do pactl info >/dev/null 2>&1 && break; sleep 0.1; done
pactl info >/dev/null 2>&1 || { echo "PulseAudio did not come up; see $XDG_RUNTIME_DIR/pulseaudio.log" >&2; exit 1; }
# The daemon writes its own PID file; copy it next to ours so one file lists everything.
cat "$XDG_RUNTIME_DIR/pulse/pid" >> "$pids"
# Keep-alives: 10 ms-latency readers stop the idle null sinks from rendering in ~2 s blocks
# (without them ALSA streams stall ~1.5 s at start and report I/O errors).
for s in eq_out eq_src; do
  nohup pacat -r -d "$s.monitor" --raw --latency-msec=10 /dev/null >/dev/null 2>&1 &
  echo $! >> "$pids"
done
for _ in $(seq 50); do [ "$(pactl list short source-outputs | wc -l)" -ge 2 ] && break; sleep 0.1; done
sleep 2.5  # let the null sinks leave their initial ~2 s idle block
echo "XDG_RUNTIME_DIR=$XDG_RUNTIME_DIR"

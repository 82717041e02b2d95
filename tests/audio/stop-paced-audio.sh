#!/bin/bash
# Stops what start-paced-audio.sh started, by the PIDs it recorded (never by process name).
# Usage: XDG_RUNTIME_DIR=<dir printed by start-paced-audio.sh> stop-paced-audio.sh
set -uo pipefail
: "${XDG_RUNTIME_DIR:?set XDG_RUNTIME_DIR to the directory start-paced-audio.sh printed}"
pids="$XDG_RUNTIME_DIR/paced-audio.pids"
[ -f "$pids" ] || { echo "no $pids: nothing to stop" >&2; exit 0; }
# Only signal a PID that still runs one of the programs we started (guards against PID reuse).
ours() { case "$(cat "/proc/$1/comm" 2>/dev/null)" in pulseaudio|pacat) return 0;; *) return 1;; esac; }
while read -r pid; do
  [ -n "$pid" ] && ours "$pid" && kill "$pid" 2>/dev/null
done < "$pids"
for _ in $(seq 30); do
  alive=0
  while read -r pid; do [ -n "$pid" ] && ours "$pid" && alive=1; done < "$pids"
  [ "$alive" = 0 ] && break
  sleep 0.1
done
while read -r pid; do
  [ -n "$pid" ] && ours "$pid" && { echo "PID $pid ignored SIGTERM; sending SIGKILL" >&2; kill -9 "$pid"; }
done < "$pids"
rm -f "$pids"

#!/usr/bin/env bash
# Runs every check: regenerates the reference fixtures with the pinned numpy/scipy and compares
# them value by value (within stated tolerances) with the committed ones, builds and runs the
# whole Rust test suite, a one-minute fuzzing run per target from the committed corpus, and the
# real-time paced tests on a private PulseAudio, a private JACK server and a private PipeWire.
# Installs what a fresh Debian/Ubuntu machine lacks (as root or with sudo). Prints how long each
# stage took at the end.
set -euo pipefail
cd "$(dirname "$0")/.."
# shellcheck source=lib/ensure_tools.sh
source scripts/lib/ensure_tools.sh
# shellcheck source=lib/stages.sh
source scripts/lib/stages.sh

stage "packages and toolchain" ensure_packages "${BUILD_PACKAGES[@]}" python3 python3-venv systemd man-db \
    pulseaudio pulseaudio-utils libasound2-plugins jackd2 \
    pipewire pipewire-bin wireplumber dbus-daemon
ensure_cargo

# Also regenerated once with OpenBLAS on another code path, as another processor would run it.
stage "reference fixtures (numpy/scipy, pinned)" \
    env REDRESS_FIXTURES_OTHER_PATH=1 bash scripts/reference/check_fixtures.sh

stage "build (tests, benches, examples)" cargo build --all-targets
# tests/service_metrics.rs leaves the figures it took here, for the outside parser below.
metrics_samples=$(mktemp -d)
stage "cargo test" env REDRESS_METRICS_SAMPLES_DIR="$metrics_samples" cargo test --all-targets
stage "figures read by prometheus_client (pinned)" \
    sh scripts/reference/check_metrics.sh "$metrics_samples"

# The Debian package, installed and removed for real (root only: it changes the machine).
deb_package() {
    if [ "$(id -u)" -ne 0 ]; then
        echo "   skipped: installing the package needs root" >&2
        return 0
    fi
    local deb
    deb=$(bash scripts/build-deb.sh dev)
    REDRESS_DEB_PACKAGE="$PWD/$deb" cargo test --test package_deb
}
stage "Debian package: build, dpkg -i, checks, dpkg -r" deb_package

# A short fuzzing run of both targets from the committed corpus (fuzz/README.md). The campaign's
# hang limit is 1 s per input, measured alone; the slowest committed inputs take up to about 1 s
# in this instrumented build, so here the limit is 5 s: a slower or busy CI machine must not fail
# on them, while a real hang still does.
stage "fuzzing, one minute per target" bash scripts/fuzz.sh 60 5

# Real-time paced tests (the audio test kit's tier 2): a private PulseAudio with null sinks under
# ALSA's file plugin. Everything it starts is stopped by PID when this script exits.
XDG_RUNTIME_DIR=$(mktemp -d)
export XDG_RUNTIME_DIR
trap 'bash tests/audio/stop-paced-audio.sh; print_stage_times' EXIT
stage "private PulseAudio" bash tests/audio/start-paced-audio.sh
echo "   (PulseAudio in $XDG_RUNTIME_DIR)" >&2

# A shared machine can starve a real-time path now and then (a sound-server stall the device
# counters cannot see); the behaviour under test is ours, so a run is retried up to twice, and
# never silently: before each retry the failed attempt's reason is printed as the test stated it
# (its panic message), with the machine's load at that moment. The fault tests (sound server lost
# and back, SIGHUP storm, a short soak: REDRESS_SOAK_SECONDS, default 45) share the one sound
# server, so they run one at a time.
paced() {
    local attempt log
    log=$(mktemp)
    for attempt in 1 2 3; do
        if cargo test --test "$1" -- --ignored --test-threads=1 --nocapture 2>&1 | tee "$log"; then
            rm -f "$log"
            return 0
        fi
        echo "== $1: attempt $attempt failed; the reason, as the test printed it:" >&2
        grep -E -A6 "panicked at" "$log" | head -40 | sed 's/^/   | /' >&2 ||
            echo "   | (no panic message: the test binary itself failed; see the output above)" >&2
        echo "   load average then: $(cut -d' ' -f1-3 /proc/loadavg)" >&2
    done
    rm -f "$log"
    return 1
}
stage "paced tests: service_paced" paced service_paced
stage "paced tests: service_paced_faults" paced service_paced_faults
# The JACK host: the test starts its own jackd (dummy driver, no real-time, a private server
# name) and stops it by PID; the service runs as one JACK client between a feeding and a
# recording client.
stage "paced tests: service_jack (private jackd)" paced service_jack
# The PipeWire host: the test starts its own pipewire daemon in a runtime folder of its own,
# wireplumber under a private D-Bus session (dbus-run-session), and two null-sink nodes; all
# stopped by PID. The service captures one sink's monitor and plays into the other.
stage "paced tests: service_pipewire (private pipewire)" paced service_pipewire

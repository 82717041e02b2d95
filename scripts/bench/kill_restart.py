#!/usr/bin/env python3
"""Time from `kill -9` of the service to audio flowing again, under the units' restart settings.

    python3 scripts/bench/kill_restart.py [--binary PATH] [--config TOML] [--runs N]

Plays the init system's part as configs/systemd/redress.service asks (Restart=on-failure,
RestartSec= read from the unit): starts `redress run --simulate`, waits until audio flows, kills
it with SIGKILL, reaps it, waits RestartSec, starts it again on the same status socket (the dead
one's socket is left behind, as after a real crash) and asks that socket, as fast as it answers,
until the new engine has processed frames. Prints the whole gap and the part that is the
service's own start-up (exec to the first frames). A measurement, not a test: it asserts nothing.

Where systemd itself supervises, its reaping and fork/exec add about a millisecond; real devices
add their opening time (tens of milliseconds for ALSA hardware) to the simulated link's.
"""

import argparse
import os
import re
import signal
import statistics
import subprocess
import sys
import tempfile
import time

from status_socket import ask

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))


def restart_sec(unit):
    text = open(unit, encoding="utf-8").read()
    m = re.search(r"^RestartSec=(\d+(?:\.\d+)?)(ms|s)?\s*$", text, re.M)
    if not m:
        sys.exit(f"no RestartSec= in {unit}")
    value = float(m.group(1))
    return value / 1000 if m.group(2) == "ms" else value


def frames(path):
    try:
        return ask(path, timeout=1.0).get("engine", {}).get("frames", 0)
    except (OSError, ValueError):
        return 0


def start(args, sock, log):
    return subprocess.Popen(
        [args.binary, "run", args.config, "--simulate", "--socket", sock, "-q"], stderr=log
    )


def wait_flowing(sock, service, since):
    while frames(sock) == 0:
        if service.poll() is not None:
            sys.exit("the service ended before audio flowed")
        if time.monotonic() - since > 30:
            sys.exit("no audio within 30 s of a start")
        time.sleep(0.001)
    return time.monotonic()


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--binary", default=os.path.join(ROOT, "target", "debug", "redress"))
    parser.add_argument("--config", default=os.path.join(ROOT, "configs", "hillside_relay.toml"))
    parser.add_argument("--unit", default=os.path.join(ROOT, "configs", "systemd", "redress.service"))
    parser.add_argument("--runs", type=int, default=5)
    args = parser.parse_args()
    pause = restart_sec(args.unit)

    folder = tempfile.mkdtemp(prefix="redress-kill-")
    sock = os.path.join(folder, "status.sock")
    log = open(os.path.join(folder, "log"), "w")
    service = start(args, sock, log)
    gaps, start_ups = [], []
    try:
        wait_flowing(sock, service, time.monotonic())
        for _ in range(args.runs):
            time.sleep(1.0)
            killed = time.monotonic()
            service.send_signal(signal.SIGKILL)
            service.wait()
            time.sleep(pause)
            started = time.monotonic()
            service = start(args, sock, log)
            flowing = wait_flowing(sock, service, started)
            gaps.append(flowing - killed)
            start_ups.append(flowing - started)
    finally:
        service.send_signal(signal.SIGTERM)
        service.wait(timeout=30)
        log.close()

    ms = lambda xs: ", ".join(f"{x * 1000:.0f}" for x in xs)  # noqa: E731
    print(f"kill -9 to audio flowing again ({args.binary}, {os.path.relpath(args.config, ROOT)},"
          f" RestartSec={pause:g} s, {len(gaps)} runs):")
    print(f"  gap median {statistics.median(gaps) * 1000:.0f} ms (each: {ms(gaps)})")
    print(f"  of which start-up (exec to first frames) median"
          f" {statistics.median(start_ups) * 1000:.0f} ms (each: {ms(start_ups)})")


if __name__ == "__main__":
    main()

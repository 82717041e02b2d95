#!/usr/bin/env python3
"""Time from SIGHUP to the first crossfade frame of `redress run --simulate`.

    python3 scripts/bench/sighup_crossfade.py [--binary PATH] [--config TOML] [--reloads N]

Starts the service on the simulated link, lets it go idle, then sends SIGHUP N times (with an
idle pause of 0.3 to 1.3 s before each, so every phase of the control loop's long tick is met)
and asks the status socket, as fast as it answers, for the engine's `swaps_started` counter:
the engine counts a swap in the callback that mixes the first frame of the crossfade. The time
from the signal to the first answer showing the new count is the figure; it includes the
config's reading and design, the new set's warm-up on the live input (its own decay, so choose
a config whose design and decay are short: the default is such a one) and the poll's own round
trip, printed apart as the resolution. A measurement, not a test: it asserts nothing.

Standard library only (and status_socket.py beside it).
"""

import argparse
import os
import random
import signal
import statistics
import subprocess
import sys
import tempfile
import time

from status_socket import ask

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))


def engine(path):
    """The engine's part of the status document, or None while the service is not answering."""
    try:
        doc = ask(path)
    except (OSError, ValueError):
        return None
    return doc.get("engine")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--binary", default=os.path.join(ROOT, "target", "debug", "redress"))
    parser.add_argument("--config", default=os.path.join(ROOT, "configs", "hillside_relay.toml"))
    parser.add_argument("--reloads", type=int, default=20)
    parser.add_argument("--seed", type=int, default=18)
    args = parser.parse_args()
    random.seed(args.seed)

    folder = tempfile.mkdtemp(prefix="redress-hup-")
    sock = os.path.join(folder, "status.sock")
    log = open(os.path.join(folder, "log"), "w")
    service = subprocess.Popen(
        [args.binary, "run", args.config, "--simulate", "--socket", sock, "-q"],
        stderr=log,
    )
    try:
        start = time.monotonic()
        while True:
            e = engine(sock)
            if e and e.get("frames", 0) > 0:
                break
            if service.poll() is not None or time.monotonic() - start > 30:
                sys.exit(f"the service did not start; see {log.name}")
            time.sleep(0.05)
        time.sleep(1.5)  # idle: the control loop is on its long tick
        delays, polls = [], []
        for _ in range(args.reloads):
            time.sleep(random.uniform(0.3, 1.3))
            before = engine(sock)["swaps_started"]
            sent = time.monotonic()
            service.send_signal(signal.SIGHUP)
            while True:
                asked = time.monotonic()
                e = engine(sock)
                answered = time.monotonic()
                polls.append(answered - asked)
                if e and e["swaps_started"] > before:
                    delays.append(answered - sent)
                    break
                if answered - sent > 10:
                    sys.exit(f"no crossfade within 10 s of a SIGHUP; see {log.name}")
            # Let the crossfade finish before the next reload.
            while True:
                e = engine(sock)
                if e and e["swaps_completed"] >= e["swaps_started"]:
                    break
                time.sleep(0.01)
    finally:
        service.send_signal(signal.SIGTERM)
        service.wait(timeout=30)
        log.close()

    ms = sorted(d * 1000 for d in delays)
    print(f"SIGHUP to first crossfade frame ({args.binary}, {os.path.relpath(args.config, ROOT)},"
          f" {len(ms)} reloads):")
    print(f"  median {statistics.median(ms):.1f} ms, p90 {ms[int(0.9 * (len(ms) - 1))]:.1f} ms,"
          f" max {ms[-1]:.1f} ms, min {ms[0]:.1f} ms")
    print(f"  status round trip (the resolution): median {statistics.median(polls) * 1000:.2f} ms")


if __name__ == "__main__":
    main()

#!/usr/bin/env python3
"""Writes the reference fixture tests/drift_two_clocks.rs reads: the stream resampled by the
ratio of two clocks 100 ppm apart, by scipy.signal.resample_poly.

redress resamples the live stream by a ratio near 1 when capture and playback run on two
clocks (io/live/drift.rs, rubato's polynomial resampler). This script resamples the same input
by the same ratio, 10001/10000 (playback 100 ppm fast: 10001 frames out for 10000 in), with
scipy.signal.resample_poly (default Kaiser window, beta 5.0) and keeps a stretch of the
middle of its output, away from both ends' transients. The Rust test rebuilds the input from
the closed form recorded here, so only the output is stored.

The input is invented: two tones under half of full scale, 997 Hz and 1499 Hz at 48 kHz,
one per channel, for two seconds.

Usage:
  make_drift_fixtures.py [--out DIR]   write the fixture (default: tests/fixtures/drift)
  make_drift_fixtures.py --check       regenerate into a temporary folder and compare values
                                       with the committed file within fixture_compare.py's
                                       tolerances; exit 1 on any difference beyond them
"""

import os

import numpy as np
import scipy
import scipy.signal

import fixture_files

REPO = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
DEFAULT_OUT = os.path.join(REPO, "tests", "fixtures", "drift")

RATE = 48000
SECONDS = 2
TONES_HZ = [997.0, 1499.0]
LEVEL = 0.5
UP, DOWN = 10001, 10000
# The stretch kept: output frames [START, START + LENGTH), far from both ends.
START, LENGTH = 40000, 4800


def resample_fixture():
    n = np.arange(RATE * SECONDS)
    channels = []
    for tone in TONES_HZ:
        x = LEVEL * np.sin(2.0 * np.pi * tone * n / RATE)
        y = scipy.signal.resample_poly(x, UP, DOWN)
        channels.append(y[START : START + LENGTH].tolist())
    return {
        "input": {
            "sample_rate_hz": RATE,
            "frames": RATE * SECONDS,
            "tones_hz": TONES_HZ,
            "level": LEVEL,
            "formula": "level * sin(2 pi tone n / sample_rate_hz), n from 0",
        },
        "up": UP,
        "down": DOWN,
        "output_start": START,
        "output": channels,
        "source": {
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "functions": ["scipy.signal.resample_poly (window ('kaiser', 5.0), padtype constant)"],
        },
    }


def generate(out):
    fixture_files.require_pinned_versions()
    os.makedirs(out, exist_ok=True)
    fixture_files.write(os.path.join(out, "resample_100ppm.json"), resample_fixture())
    return ["resample_100ppm"]


if __name__ == "__main__":
    fixture_files.main(__doc__, generate, DEFAULT_OUT, "drift", "make_drift_fixtures.py")

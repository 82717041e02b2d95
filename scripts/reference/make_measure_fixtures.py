#!/usr/bin/env python3
"""Writes the reference fixtures tests/measure_identify.rs reads: known channels whose impulse
and frequency responses come from scipy.signal, for checking what redress identifies from
synthetic recordings of them.

Every response number comes from scipy (versions pinned in requirements.txt and recorded in each
file), never from redress. The channels are invented links of our own.

For each channel: b, a, the sample rate, the orders an IIR fit should use, the impulse response
(scipy.signal.lfilter on a unit impulse) and the frequency response at fixed frequencies in Hz
(scipy.signal.freqz with fs), as real and imaginary parts.

Usage:
  make_measure_fixtures.py [--out DIR]   write fixtures (default: tests/fixtures/measure)
  make_measure_fixtures.py --check       regenerate into a temporary folder and compare values
                                         with the committed files within the tolerances of
                                         fixture_compare.py; exit 1 on any difference beyond them
"""

import json
import os

import numpy as np
import scipy
import scipy.signal

import fixture_files


REPO = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
DEFAULT_OUT = os.path.join(REPO, "tests", "fixtures", "measure")

IMPULSE_LENGTH = 128
# Frequencies (Hz) the response is compared at: log-spaced over most of the band.
FREQUENCY_POINTS = 40


def channels():
    """(name, scenario, sample rate, b, a, numerator order, denominator order).

    The orders are those of the channel after its bulk delay (leading zero taps of b): the
    identification starts its model at the response's onset."""
    return [
        (
            "chapel_feed_fir",
            "copper pair from the hillside chapel desk to the bell-tower horn amplifier: two "
            "samples of converter latency and a short treble loss",
            16000.0,
            [0.0, 0.0, 0.82, -0.31, 0.12, 0.05],
            [1.0],
            3,
            0,
        ),
        (
            "quarry_hop_ringing",
            "wireless hop across the quarry whose receiver filter rings: a resonant pole pair "
            "at radius 0.63",
            16000.0,
            [0.6, 0.25, -0.1],
            [1.0, -0.9, 0.4],
            2,
            2,
        ),
        (
            "ferry_ramp_intercom",
            "intercom line down the ferry ramp: a slow pole and a zero pair near 5 kHz",
            16000.0,
            [0.5, 0.0, 0.405],
            [1.0, -0.7],
            2,
            1,
        ),
    ]


def fixture(name, scenario, fs, b, a, nb, na):
    impulse = np.zeros(IMPULSE_LENGTH)
    impulse[0] = 1.0
    h = scipy.signal.lfilter(b, a, impulse)
    freqs = np.geomspace(50.0, 0.45 * fs, FREQUENCY_POINTS)
    _, response = scipy.signal.freqz(b, a, worN=freqs, fs=fs)
    return {
        "name": name,
        "scenario": scenario,
        "sample_rate": fs,
        "b": [float(v) for v in b],
        "a": [float(v) for v in a],
        "numerator_order": nb,
        "denominator_order": na,
        "impulse_response": [float(v) for v in h],
        "frequencies_hz": [float(v) for v in freqs],
        "response_re": [float(v) for v in np.real(response)],
        "response_im": [float(v) for v in np.imag(response)],
        "source": {
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "impulse_response": "scipy.signal.lfilter",
            "frequency_response": "scipy.signal.freqz (worN in Hz, fs)",
            "frequencies": "numpy.geomspace",
        },
    }


def generate(out):
    fixture_files.require_pinned_versions()
    os.makedirs(out, exist_ok=True)
    names = []
    for entry in channels():
        name = entry[0]
        with open(os.path.join(out, f"{name}.json"), "w", encoding="utf-8", newline="\n") as f:
            f.write(json.dumps(fixture(*entry), indent=1) + "\n")
        names.append(name)
    return names


if __name__ == "__main__":
    fixture_files.main(__doc__, generate, DEFAULT_OUT, "measurement", "make_measure_fixtures.py")

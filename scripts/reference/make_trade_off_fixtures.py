#!/usr/bin/env python3
"""Writes the reference fixtures tests/reference_trade_off.rs reads: the latency-error table.

For invented channels with zeros outside the unit circle, with numpy / scipy only (versions
pinned in requirements.txt and recorded in every file):

  * the delayed least-squares FIR at every latency of redress's ladder (0, 0.25, 0.5, 1, 2, 5,
    10, 20 ms), with redress's stated taps rule (the channel's response up to its last sample
    above -60 dB of its peak, plus twice the total delay, from 256 to 4096 taps): taps by
    numpy.linalg.lstsq on the full convolution matrix, and the residual ||H g - d||^2 in dB
    (no regularisation: these channels' FIRs stay under the 20 dB cap without it, which the
    Rust test checks);
  * the all-pass the minimum-phase substitute leaves, B / B_min, with B_min from
    scipy.signal.minimum_phase (homomorphic, half=False, n_fft = 2^20: |B_min| keeps |B| to
    about 1e-7; the reflection by numpy.roots and numpy.poly loses the magnitude at order 106,
    down to 1e-8 in places, so it is not used): its group delay by scipy.signal.group_delay at a
    few frequencies, and its least and largest over the grid redress's report scans
    (w = pi i / 2048, i = 1 ... 2047), in ms.

The JSON is written with fixture_files' stable emitter; a fresh run is compared by value
(fixture_compare.py).

Usage:
  make_trade_off_fixtures.py [--out DIR]   write fixtures (default: tests/fixtures/trade_off)
  make_trade_off_fixtures.py --check       regenerate into a temporary folder and compare values
"""

import os

import numpy as np
import scipy
import scipy.signal

import fixture_files

REPO = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
DEFAULT_OUT = os.path.join(REPO, "tests", "fixtures", "trade_off")

SAMPLE_RATE = 48000.0
# redress::design::LATENCY_LADDER_MS.
LADDER_MS = [0.0, 0.25, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0]
# redress::model::{DEFAULT_FIR_TAPS, MAX_FIR_TAPS}.
FEWEST_TAPS, MOST_TAPS = 256, 4096
# Residuals below this are rounding, different on every BLAS code path: written as the floor.
RESIDUAL_FLOOR_DB = -200.0
# Samples of an IIR channel's impulse response used (its poles are at 0.5: 0.5^400 is nothing).
IIR_LENGTH = 400
GROUP_DELAY_OMEGAS = [0.05, 0.4, 1.0, 1.7, 2.6, 3.1]
ALL_PASS_GRID = 2048


def channels():
    hop = np.zeros(107)
    hop[0], hop[43], hop[106] = 0.45, 0.8, -0.12
    return [
        (
            "silo_hop",
            "a weak direct arrival, a stronger reflection 43 samples later and a weak one at 106",
            hop,
            np.array([1.0]),
        ),
        (
            "relay_with_ringing",
            "one sample of converter delay, a zero outside the circle and a receiver pole at 0.5",
            np.array([0.0, 0.5, 1.0, 0.3]),
            np.array([1.0, -0.5]),
        ),
    ]


def impulse_response(b, a):
    if len(a) == 1:
        return np.asarray(b, dtype=float) / a[0]
    x = np.zeros(IIR_LENGTH)
    x[0] = 1.0
    return scipy.signal.lfilter(b, a, x)


def reach(h):
    peak = np.max(np.abs(h))
    above = np.nonzero(np.abs(h) > 1e-3 * peak)[0]
    return int(above[-1]) + 1


def lstsq_residual_db(h, taps, delay):
    rows = len(h) + taps - 1
    conv = np.zeros((rows, taps))
    for j in range(taps):
        conv[j : j + len(h), j] = h
    target = np.zeros(max(rows, delay + 1))
    target[delay] = 1.0
    conv = np.vstack([conv, np.zeros((len(target) - rows, taps))])
    g, *_ = np.linalg.lstsq(conv, target, rcond=None)
    return 10.0 * np.log10(float(np.sum((conv @ g - target) ** 2))), g


MINIMUM_PHASE_N_FFT = 1 << 20


def minimum_phase(b):
    return scipy.signal.minimum_phase(
        b, method="homomorphic", half=False, n_fft=MINIMUM_PHASE_N_FFT
    )


def fixture(name, scenario, b, a):
    bulk = int(np.argmax(np.abs(b) > 0))
    stripped = b[bulk:]
    h = impulse_response(b, a)
    rows = []
    for ms in LADDER_MS:
        latency = int(round(ms * SAMPLE_RATE / 1000.0))
        delay = bulk + latency
        taps = min(max(reach(h) + 2 * delay, FEWEST_TAPS), MOST_TAPS)
        residual_db, g = lstsq_residual_db(h, taps, delay)
        rows.append(
            {
                "latency_ms": ms,
                "latency_samples": latency,
                "total_delay_samples": delay,
                "taps": taps,
                "lstsq_residual_db": max(residual_db, RESIDUAL_FLOOR_DB),
                "peak_boost_db": float(
                    20.0 * np.log10(np.max(np.abs(np.fft.rfft(g, 1 << 16))))
                ),
            }
        )
    b_min = minimum_phase(stripped)
    _, at = scipy.signal.group_delay((stripped, b_min), w=GROUP_DELAY_OMEGAS)
    grid = np.pi * np.arange(1, ALL_PASS_GRID) / ALL_PASS_GRID
    _, over_grid = scipy.signal.group_delay((stripped, b_min), w=grid)
    to_ms = 1000.0 / SAMPLE_RATE
    return {
        "name": name,
        "scenario": scenario,
        "source": f"numpy {np.__version__} (linalg.lstsq, roots), scipy {scipy.__version__} "
        "(signal.lfilter, signal.minimum_phase, signal.group_delay)",
        "sample_rate": SAMPLE_RATE,
        "b": b,
        "a": a,
        "bulk_delay": bulk,
        "fir_rows": rows,
        "all_pass_omegas": GROUP_DELAY_OMEGAS,
        "all_pass_group_delay_samples": at,
        "all_pass_group_delay_min_ms": float(np.min(over_grid)) * to_ms,
        "all_pass_group_delay_max_ms": float(np.max(over_grid)) * to_ms,
    }


def generate(out):
    fixture_files.require_pinned_versions()
    os.makedirs(out, exist_ok=True)
    names = []
    for name, scenario, b, a in channels():
        fixture_files.write(os.path.join(out, f"{name}.json"), fixture(name, scenario, b, a))
        names.append(name)
    return names


if __name__ == "__main__":
    fixture_files.main(
        __doc__, generate, DEFAULT_OUT, "trade-off", "make_trade_off_fixtures.py"
    )

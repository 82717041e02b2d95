#!/usr/bin/env python3
"""Writes the reference fixtures tests/reference_long_channels.rs reads: room-like channels of
hundreds to a thousand taps, with what their substitute inverses must reproduce.

The channels come from pyroomacoustics' image-source model (a general-purpose acoustics
library; the rooms are invented here, and the responses are test fixtures, not demo data):
a shoebox room at 16 kHz, its response trimmed to 256 and 1024 taps (mixed phase: the
fractional-delay pre-ringing ahead of the direct sound and the reflections put many zeros
outside the circle). For each:

  * |B_min(e^jω)| in dB on a grid of MAGNITUDE_POINTS frequencies (scipy.signal.freqz) of
    scipy.signal.minimum_phase(b, method="homomorphic", half=False, n_fft=MINIMUM_PHASE_N_FFT):
    the magnitude a minimum-phase substitute must keep, computed without redress;
  * the same channel made minimum phase first (that scipy result, full length), which needs
    the boost cap under redress's default policy;
  * how many zeros lie outside the unit circle, from numpy.roots (companion-matrix eigenvalues
    in LAPACK; at 1023 roots no single root is accurate, but a count 1e-6 clear of the circle
    is), which redress must match without computing any root;
  * the delayed least-squares FIR inverse by numpy.linalg.lstsq on the convolution matrix at a
    fixed delay: its taps and the residual ‖h∗g − δ(n−D)‖² in dB.

Every number is from numpy / scipy / pyroomacoustics (versions pinned in requirements.txt and
recorded in each file), never from redress. Arrays are kept short (a 1024-tap response, a grid
of 256 frequencies, 256 FIR taps) so the files stay small.

Usage:
  make_long_channel_fixtures.py [--out DIR]   write fixtures (default: tests/fixtures/long_channels)
  make_long_channel_fixtures.py --check       regenerate into a temporary folder and compare
                                              with the committed files; exit 1 on a difference
"""

import os

import numpy as np
import pyroomacoustics as pra
import scipy
import scipy.signal

import fixture_files

REPO = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
DEFAULT_OUT = os.path.join(REPO, "tests", "fixtures", "long_channels")

PINNED_PYROOMACOUSTICS = "0.10.1"
SAMPLE_RATE = 16000
# The cepstrum of a zero at radius ρ decays like ρⁿ: 2^20 points leave ~ρ^(2^20) of aliasing.
MINIMUM_PHASE_N_FFT = 1 << 20
# Frequencies of the magnitude grid: ω = π·(i + 0.5)/MAGNITUDE_POINTS, i = 0 … points − 1.
MAGNITUDE_POINTS = 256
# The least-squares FIR inverse: taps and delay (samples after the channel's largest tap).
FIR_TAPS = 256
FIR_DELAY_AFTER_PEAK = 96


def room_response():
    """An invented rehearsal room, 6 × 4.5 × 3.1 m, walls absorbing 35 % of the energy."""
    room = pra.ShoeBox(
        [6.0, 4.5, 3.1], fs=SAMPLE_RATE, materials=pra.Material(0.35), max_order=12
    )
    room.add_source([1.3, 2.1, 1.5])
    room.add_microphone([4.4, 2.9, 1.2])
    room.compute_rir()
    return np.asarray(room.rir[0][0], dtype=float)


def omegas():
    return np.pi * (np.arange(MAGNITUDE_POINTS) + 0.5) / MAGNITUDE_POINTS


def db(b, w):
    _, h = scipy.signal.freqz(b, [1.0], worN=w)
    return 20.0 * np.log10(np.abs(h))


def minimum_phase(b):
    return scipy.signal.minimum_phase(
        b, method="homomorphic", half=False, n_fft=MINIMUM_PHASE_N_FFT
    )


def lstsq_fir(h, taps, delay):
    rows = len(h) + taps - 1
    conv = np.zeros((rows, taps))
    for j in range(taps):
        conv[j : j + len(h), j] = h
    target = np.zeros(rows)
    target[delay] = 1.0
    g, *_ = np.linalg.lstsq(conv, target, rcond=None)
    residual = float(np.sum((conv @ g - target) ** 2))
    return g, 10.0 * np.log10(residual)


def fixture(name, scenario, b):
    w = omegas()
    b_min = minimum_phase(b)
    peak = int(np.argmax(np.abs(b)))
    delay = peak + FIR_DELAY_AFTER_PEAK
    g, residual_db = lstsq_fir(b, FIR_TAPS, delay)
    roots = np.abs(np.roots(b))
    return {
        "zeros_outside_numpy_roots": int(np.sum(roots > 1.0 + 1e-6)),
        "zeros_near_circle_numpy_roots": int(np.sum(np.abs(roots - 1.0) <= 1e-6)),
        "name": name,
        "scenario": scenario,
        "source": (
            f"pyroomacoustics {pra.__version__} image-source model, numpy {np.__version__}, "
            f"scipy {scipy.__version__}"
        ),
        "sample_rate": float(SAMPLE_RATE),
        "b": b,
        "omegas": w,
        "magnitude_db": db(b, w),
        "minimum_phase_magnitude_db": db(b_min, w),
        "minimum_phase_n_fft": MINIMUM_PHASE_N_FFT,
        "minimum_phase_b": b_min,
        "fir_taps": FIR_TAPS,
        "fir_delay": delay,
        "fir_lstsq_taps": g,
        "fir_residual_db": residual_db,
    }


def generate(out):
    fixture_files.require_pinned_versions()
    if pra.__version__ != PINNED_PYROOMACOUSTICS:
        raise SystemExit(
            f"need pyroomacoustics {PINNED_PYROOMACOUSTICS}, found {pra.__version__}: "
            "pip install -r scripts/reference/requirements.txt"
        )
    os.makedirs(out, exist_ok=True)
    h = room_response()
    cases = [
        ("room_256", "the rehearsal room's response, first 256 taps at 16 kHz", h[:256]),
        ("room_1024", "the rehearsal room's response, first 1024 taps at 16 kHz", h[:1024]),
    ]
    for name, scenario, b in cases:
        fixture_files.write(os.path.join(out, f"{name}.json"), fixture(name, scenario, b))
    return [c[0] for c in cases]


if __name__ == "__main__":
    fixture_files.main(
        __doc__, generate, DEFAULT_OUT, "long-channel", "make_long_channel_fixtures.py"
    )

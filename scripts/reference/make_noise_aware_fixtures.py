#!/usr/bin/env python3
"""Writes the reference fixtures tests/reference_noise_aware.rs reads: the band-weighted,
noise-regularised (Wiener-style) least-squares FIR inverse computed directly with numpy on the
same spectra redress uses.

Every number comes from numpy (versions pinned in requirements.txt and recorded in each file),
never from redress. The channel is an invented link of our own.

For each case: the channel's impulse response (scipy.signal.lfilter), the FFT grid size M, the
taps L, the delay D, the Tikhonov weight, the band's weight W and the Wiener factor S/(1 + S) on
the half grid (from the band edges and the per-band SNR list, by the definitions in
src/design/correction_band.rs and src/design/noise_weight.rs), the Wiener inverse spectrum
conj(H)/(|H|^2 + |H|^2/S) at every bin, and the taps that minimise

    sum_k  W|H G - e^{-jwD}|^2 + (1 - W)|G - e^{-jwD}|^2 + (W |H|^2 / S + lambda ||h||^2)|G|^2

solved by numpy.linalg.lstsq on the stacked (real and imaginary) rows: no Toeplitz structure, no
Levinson recursion, so nothing is shared with redress's solver.

Usage:
  make_noise_aware_fixtures.py [--out DIR]   write fixtures (default: tests/fixtures/noise_aware)
  make_noise_aware_fixtures.py --check       regenerate and compare values with the committed
                                             files within the tolerances of fixture_compare.py
"""

import os

import numpy as np
import scipy
import scipy.signal

import fixture_files


REPO = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
DEFAULT_OUT = os.path.join(REPO, "tests", "fixtures", "noise_aware")

# One sixth of a base-10 octave (IEC 61260-1: G = 10^(3/10)).
OCTAVE_RATIO = 10.0 ** 0.3
ROLL_OFF_OCTAVES = 1.0 / 6.0


def band_weight(hz, low, high, fs):
    """0 outside [low, high], a raised cosine in log frequency over the roll inside each edge."""
    ln_g = np.log(OCTAVE_RATIO)
    inside = np.inf
    if low > 0.0:
        inside = min(inside, np.log(max(hz, 0.0) / low) / ln_g if hz > 0.0 else -np.inf)
    if high < fs / 2.0:
        inside = min(inside, np.log(high / hz) / ln_g if hz > 0.0 else np.inf)
    if inside >= ROLL_OFF_OCTAVES:
        return 1.0
    if inside <= 0.0:
        return 0.0
    return 0.5 * (1.0 - np.cos(np.pi * inside / ROLL_OFF_OCTAVES))


def snr_at(bands, hz):
    """Linear in dB against log frequency between band centres, held beyond the ends."""
    centres = np.array([b[0] for b in bands])
    values = np.array([b[1] for b in bands])
    if hz <= centres[0]:
        return values[0]
    if hz >= centres[-1]:
        return values[-1]
    return float(np.interp(np.log(hz), np.log(centres), values))


def case(name, scenario, fs, b, a, length, taps, delay, regularization, band, bands, size):
    impulse = np.zeros(length)
    impulse[0] = 1.0
    h = scipy.signal.lfilter(b, a, impulse)
    half = np.arange(size // 2 + 1)
    hz = half * fs / size
    w_half = np.array([band_weight(f, band[0], band[1], fs) for f in hz])
    s_half = np.array([10.0 ** (snr_at(bands, f) / 10.0) for f in hz])
    wiener_half = s_half / (1.0 + s_half)
    # Full grid: bin k stands for frequency min(k, M - k).
    k = np.arange(size)
    mirror = np.minimum(k, size - k)
    w = w_half[mirror]
    s = s_half[mirror]
    spectrum = np.fft.fft(h, size)
    power = np.abs(spectrum) ** 2
    wiener_inverse = np.conj(spectrum) / (power + power / s)
    omega = 2.0 * np.pi * k / size
    target = np.exp(-1j * omega * delay)
    basis = np.exp(-1j * np.outer(omega, np.arange(taps)))
    lam = regularization * float(np.sum(h * h))
    noise = w * power / s + lam
    rows = [
        np.sqrt(w)[:, None] * spectrum[:, None] * basis,
        np.sqrt(1.0 - w)[:, None] * basis,
        np.sqrt(noise)[:, None] * basis,
    ]
    rhs = [np.sqrt(w) * target, np.sqrt(1.0 - w) * target, np.zeros(size)]
    matrix = np.vstack([np.vstack([r.real, r.imag]) for r in rows])
    vector = np.concatenate([np.concatenate([v.real, v.imag]) for v in rhs])
    g, *_ = np.linalg.lstsq(matrix, vector, rcond=None)
    return {
        "name": name,
        "scenario": scenario,
        "sample_rate": fs,
        "b": [float(v) for v in b],
        "a": [float(v) for v in a],
        "impulse_response": [float(v) for v in h],
        "grid_size": size,
        "taps": taps,
        "delay": delay,
        "regularization": regularization,
        "band_hz": [float(band[0]), float(band[1])],
        "band_snr_db": [[float(c), float(v)] for c, v in bands],
        "band_weight": [float(v) for v in w_half],
        "wiener_factor": [float(v) for v in wiener_half],
        "wiener_inverse_re": [float(v) for v in wiener_inverse.real[: size // 2 + 1]],
        "wiener_inverse_im": [float(v) for v in wiener_inverse.imag[: size // 2 + 1]],
        "inverse_taps": [float(v) for v in g],
        "source": {
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "impulse_response": "scipy.signal.lfilter",
            "spectrum": "numpy.fft.fft",
            "taps": "numpy.linalg.lstsq on the stacked real and imaginary rows",
        },
    }


def cases():
    return [
        case(
            "gallery_ring_feed",
            "stage box to the gallery loudspeaker ring: a resonant pole pair near 300 Hz and a "
            "treble loss; the gallery's air handling leaves the top octave and the bottom of the "
            "measurement near the noise",
            16000.0,
            [0.7, -0.2, 0.15],
            [1.0, -1.6, 0.72],
            200,
            128,
            12,
            1e-6,
            (60.0, 6000.0),
            [(63.0, 8.0), (250.0, 30.0), (1000.0, 45.0), (4000.0, 25.0), (6300.0, 3.0)],
            2048,
        ),
    ]


def generate(out):
    fixture_files.require_pinned_versions()
    os.makedirs(out, exist_ok=True)
    names = []
    for fixture in cases():
        fixture_files.write(os.path.join(out, f"{fixture['name']}.json"), fixture)
        names.append(fixture["name"])
    return names


if __name__ == "__main__":
    fixture_files.main(
        __doc__, generate, DEFAULT_OUT, "noise-aware", "make_noise_aware_fixtures.py"
    )

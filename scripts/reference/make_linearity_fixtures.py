#!/usr/bin/env python3
"""Writes the reference fixture tests/linearity_check.rs reads: the harmonic levels of a
memoryless nonlinearity, analytic and as numpy finds them in an exponential sweep through it.

The link is invented: a small transformer-coupled line driver on a community radio desk, whose
core bends the waveform a little, modelled as the memoryless polynomial

    y = x + a*x^2 + b*x^3.

Analytic levels for a sine x = A sin(theta), from the power-reduction identities
    sin^2(theta) = (1 - cos 2 theta) / 2,
    sin^3(theta) = (3 sin theta - sin 3 theta) / 4:
    y = a A^2 / 2  +  (A + 3 b A^3 / 4) sin(theta)  -  (a A^2 / 2) cos(2 theta)
        -  (b A^3 / 4) sin(3 theta),
so the fundamental's amplitude is A + 3bA^3/4, the second harmonic's aA^2/2 and the third's
bA^3/4; each level in dB below the fundamental is 20 log10 of its ratio to the fundamental, and
the total (2nd and 3rd together; the polynomial makes no higher harmonic) adds their powers.

numpy's figures: the same exponential sweep (Farina's law, half-Hann fades, the formula below),
through the polynomial, after a latency, deconvolved with the sweep's inverse filter (the sweep
reversed with an envelope falling 6 dB per octave, scaled to unit gain at the band's geometric
centre), the linear response and each harmonic's cut out halfway to its neighbours (harmonic k
sits L ln k ahead of the linear one, L = T / ln(f2/f1)), and per one-third-octave band of the
base-10 system (IEC 61260-1) the ratio of the mean of |H_k(k f)|^2 to the mean of |H_1(f)|^2
over 64 points evenly spaced in log f across the band, |H|^2 read from the zero-padded spectrum
by linear interpolation between bins (numpy.interp). numpy uses the sweep's law as generated;
redress reads it back from the samples.

Usage:
  make_linearity_fixtures.py [--out DIR]   write the fixture (default: tests/fixtures/linearity)
  make_linearity_fixtures.py --check       regenerate into a temporary folder and compare values
                                           with the committed file within fixture_compare.py's
                                           tolerances; exit 1 on any difference beyond them
"""

import os

import numpy as np
import scipy
import scipy.signal

import fixture_files

REPO = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
DEFAULT_OUT = os.path.join(REPO, "tests", "fixtures", "linearity")

RATE = 48000
START_HZ, END_HZ, SECONDS = 20.0, 20000.0, 2.0
LEVEL_DBFS = -6.0
FADE_MS = 10.0
SILENCE_SECONDS = 0.5
LATENCY = 480
A2, A3 = 0.06, 0.04  # y = x + A2 x^2 + A3 x^3
HIGHEST_HARMONIC = 5
POINTS_PER_BAND = 64
OCTAVE_RATIO = 10.0 ** 0.3  # IEC 61260-1 base-10 octave ratio


def sweep():
    """The stimulus: sin(w1 T / R (e^{t R / T} - 1)), R = ln(f2/f1), peak at LEVEL_DBFS, half-Hann
    fades of FADE_MS at each end, then SILENCE_SECONDS of zeros."""
    frames = int(round(SECONDS * RATE))
    t = np.arange(frames) / RATE
    rate = np.log(END_HZ / START_HZ)
    w1 = 2.0 * np.pi * START_HZ
    x = np.sin(w1 * SECONDS / rate * (np.exp(t * rate / SECONDS) - 1.0))
    ramp = int(round(FADE_MS / 1000.0 * RATE))
    n = np.arange(frames)
    edge = np.minimum(n, frames - 1 - n)
    gain = np.where(edge < ramp, 0.5 - 0.5 * np.cos(np.pi * edge / ramp), 1.0)
    signal = 10.0 ** (LEVEL_DBFS / 20.0) * gain * x
    return signal, np.concatenate([signal, np.zeros(int(round(SILENCE_SECONDS * RATE)))])


def inverse_filter(signal):
    frames = len(signal)
    t = np.arange(frames) / RATE
    rate = np.log(END_HZ / START_HZ)
    inverse = signal[::-1] * np.exp(-t * rate / SECONDS)
    centre = 2.0 * np.pi * np.sqrt(START_HZ * END_HZ) / RATE
    n = np.arange(frames)
    gain = abs(np.sum(signal * np.exp(-1j * centre * n)) * np.sum(inverse * np.exp(-1j * centre * n)))
    return inverse / gain


def third_octave_bands(low, high):
    bands = []
    for x in range(-40, 20):
        mid = 1000.0 * OCTAVE_RATIO ** (x / 3.0)
        lower, upper = mid / OCTAVE_RATIO ** (1 / 6), mid * OCTAVE_RATIO ** (1 / 6)
        if lower >= low and upper <= high:
            bands.append((x, mid, lower, upper))
    return bands


def band_mean(power, bin_hz, lower, upper, k):
    lo, hi = np.log(lower), np.log(upper)
    step = (hi - lo) / POINTS_PER_BAND
    f = np.exp(lo + (np.arange(POINTS_PER_BAND) + 0.5) * step)
    bins = np.arange(len(power)) * bin_hz
    return float(np.mean(np.interp(k * f, bins, power)))


def analytic(amplitude):
    fundamental = amplitude + 3.0 * A3 * amplitude**3 / 4.0
    second = A2 * amplitude**2 / 2.0
    third = A3 * amplitude**3 / 4.0
    second_db = 20.0 * np.log10(second / fundamental)
    third_db = 20.0 * np.log10(third / fundamental)
    total_db = 10.0 * np.log10(10.0 ** (second_db / 10.0) + 10.0 ** (third_db / 10.0))
    return {
        "fundamental_amplitude": fundamental,
        "second_amplitude": second,
        "third_amplitude": third,
        "second_db": second_db,
        "third_db": third_db,
        "total_db": total_db,
    }


def swept_levels():
    signal, stimulus = sweep()
    played = np.concatenate([np.zeros(LATENCY), stimulus])
    recording = played + A2 * played**2 + A3 * played**3
    inverse = inverse_filter(signal)
    full = scipy.signal.fftconvolve(recording, inverse)
    undelayed = len(inverse) - 1
    peak = undelayed + int(np.argmax(np.abs(full[undelayed:])))
    law = SECONDS / np.log(END_HZ / START_HZ) * RATE  # L in frames

    def advance(k):
        return law * np.log(k)

    def half_gap(k):
        return 0.5 * (advance(k) - advance(k - 1))

    windows = []
    for k in range(1, HIGHEST_HARMONIC + 1):
        centre = peak - advance(k)
        ahead = centre - half_gap(k + 1)
        behind = centre + (half_gap(2) if k == 1 else half_gap(k))
        windows.append((int(np.round(ahead)), int(np.round(behind))))
    size = 1 << int(np.ceil(np.log2(2 * max(b - a for a, b in windows))))
    bin_hz = RATE / size
    spectra = [np.abs(np.fft.rfft(full[a:b], n=size)) ** 2 for a, b in windows]
    top = END_HZ
    rows = []
    for x, mid, lower, upper in third_octave_bands(START_HZ, top / 2.0):
        fundamental = band_mean(spectra[0], bin_hz, lower, upper, 1)
        fits = [k for k in range(2, HIGHEST_HARMONIC + 1) if k * upper <= top]
        level = {k: band_mean(spectra[k - 1], bin_hz, lower, upper, k) for k in fits}
        row = {"index": x, "mid_hz": mid, "lower_hz": lower, "upper_hz": upper}
        if 2 in level:
            row["second_db"] = 10.0 * np.log10(level[2] / fundamental)
        if 3 in level:
            row["third_db"] = 10.0 * np.log10(level[3] / fundamental)
            row["total_db"] = 10.0 * np.log10(sum(level.values()) / fundamental)
        rows.append(row)
    return {
        "linear_peak": peak - undelayed,
        "fft_size": size,
        "bands": rows,
    }


def fixture():
    amplitude = 10.0 ** (LEVEL_DBFS / 20.0)
    return {
        "scenario": "line driver whose transformer core bends the waveform: y = x + a x^2 + b x^3",
        "sample_rate_hz": RATE,
        "sweep": {
            "start_hz": START_HZ,
            "end_hz": END_HZ,
            "seconds": SECONDS,
            "level_dbfs": LEVEL_DBFS,
            "fade_ms": FADE_MS,
            "silence_seconds": SILENCE_SECONDS,
        },
        "latency_frames": LATENCY,
        "a": A2,
        "b": A3,
        "amplitude": amplitude,
        "analytic": analytic(amplitude),
        "swept": swept_levels(),
        "source": {
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "functions": [
                "scipy.signal.fftconvolve",
                "numpy.fft.rfft",
                "numpy.interp",
            ],
            "identities": "sin^2 = (1 - cos 2t)/2, sin^3 = (3 sin t - sin 3t)/4",
        },
    }


def generate(out):
    fixture_files.require_pinned_versions()
    os.makedirs(out, exist_ok=True)
    fixture_files.write(os.path.join(out, "line_driver_polynomial.json"), fixture())
    return ["line_driver_polynomial"]


if __name__ == "__main__":
    fixture_files.main(
        __doc__, generate, DEFAULT_OUT, "linearity", "make_linearity_fixtures.py"
    )

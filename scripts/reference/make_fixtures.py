#!/usr/bin/env python3
"""Writes the reference fixtures the Rust tests in tests/reference_scipy.rs read.

Every number in the fixtures comes from numpy / scipy (versions pinned in requirements.txt and
recorded in each file), never from redress itself, so the Rust tests check the library against
an outside implementation.

The channels are invented links of our own. For each one the script records:
  * the bulk delay (leading zero taps of b), counted here because scipy.signal.tf2zpk silently
    drops leading zeros of b;
  * zeros (numpy.roots of b with the bulk delay stripped) and poles (numpy.roots of a), with
    scipy.signal.tf2zpk as a cross-check;
  * where the zeros and poles lie against the unit circle, and so whether a stable causal inverse
    exists;
  * for invertible channels, the exact inverse G = A/B' (leading denominator coefficient 1), its
    impulse response, the cascade channel∘inverse, |G| on a coarse grid and its peak on a dense
    grid, G as second-order sections, and G run on a fixed test signal both as sections
    (sosfilt) and as one difference equation (lfilter).

Step-down (Schur–Cohn) reflection coefficients are not in scipy and are deliberately left out.

Usage:
  make_fixtures.py [--out DIR]      write fixtures (default: tests/fixtures/reference)
  make_fixtures.py --check          regenerate into a temporary folder and compare values with
                                    the committed files within the tolerances of
                                    fixture_compare.py; exit 1 on any difference beyond them
"""

import math
import os

import numpy as np
import scipy
import scipy.optimize
import scipy.signal

import fixture_files


REPO = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
DEFAULT_OUT = os.path.join(REPO, "tests", "fixtures", "reference")

SAMPLE_RATE = 48000.0
# Same meaning as redress::model::DEFAULT_CIRCLE_TOLERANCE: | |z| − 1 | below this is "on".
CIRCLE_TOLERANCE = 1e-9
IMPULSE_LENGTH = 256
COARSE_POINTS = 32
DENSE_POINTS = 65536
SIGNAL_LENGTH = 512
SIGNAL_SEED = 20250611
SIGNAL_SCALE = 0.25
# Maxima of |G| within this many dB of the largest count as the same peak.
PEAK_TIE_DB = 1e-6

FUNCTIONS = {
    "zeros": "numpy.roots (b with leading zero taps stripped)",
    "poles": "numpy.roots (a)",
    "zeros_poles_cross_check": "scipy.signal.tf2zpk",
    "inverse_impulse_response": "scipy.signal.lfilter",
    "cascade_impulse_response": "scipy.signal.lfilter (channel applied to the inverse's impulse response)",
    "magnitude": "scipy.signal.freqz",
    "peak": "scipy.signal.freqz (dense grid, include_nyquist) refined by scipy.optimize.minimize_scalar",
    "sections": "scipy.signal.tf2sos",
    "signal_output_sections": "scipy.signal.sosfilt",
    "signal_output_direct": "scipy.signal.lfilter",
    "signal": "numpy.random.default_rng(seed).standard_normal",
}


def polar(radius, angle):
    return radius * complex(math.cos(angle), math.sin(angle))


def conjugate_pairs(*points):
    roots = []
    for r, w in points:
        z = polar(r, w)
        roots += [z, z.conjugate()]
    return roots


def real_poly(roots, gain=1.0):
    return [gain * float(c) for c in np.real(np.poly(roots))]


# Zeros known exactly by construction, with multiplicity: (1 − 0.5z⁻¹)²·(1 + 0.25z⁻¹)³.
CONSTRUCTED_ZEROS = {"repeated_zero": [([0.5, 0.0], 2), ([-0.25, 0.0], 3)]}


def channels():
    """The invented links: (name, scenario, b, a, expected verdict)."""
    pilot = 2.0 * math.pi * 1000.0 / SAMPLE_RATE
    cabinet = 2.0 * math.pi * 3100.0 / SAMPLE_RATE
    return [
        (
            "east_rack_line",
            "2 km copper line to the east amplifier rack: gentle treble loss, one slow pole",
            [0.82, -0.31, 0.07],
            [1.0, -0.18],
            "invertible",
        ),
        (
            "silo_reflection_hop",
            "wireless hop across the quarry; reflections off the silo 7 and 11 samples late",
            [1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.398, 0.0, 0.0, 0.0, 0.12],
            [1.0],
            "invertible",
        ),
        (
            "paging_feed_delay3",
            "paging feed through a converter with 3 samples of latency and a mild tilt",
            [0.0, 0.0, 0.0, 0.7, 0.21, -0.06],
            [1.0, -0.42, 0.05],
            "invertible",
        ),
        (
            "order8_minphase",
            "ceiling speaker run in the east wing: eight zeros inside, one resonant pole pair",
            real_poly(
                conjugate_pairs((0.92, 0.35), (0.85, 1.1), (0.7, 2.0)) + [-0.6, 0.45], 0.6
            ),
            real_poly(conjugate_pairs((0.55, 0.6))),
            "invertible",
        ),
        (
            "notch_on_circle",
            "studio feed with the 1 kHz pilot-tone trap still in it: zeros on the circle",
            [1.0, -2.0 * math.cos(pilot), 1.0],
            [1.0, -2.0 * 0.9 * math.cos(pilot), 0.81],
            "zeros_on_circle",
        ),
        (
            "repeated_zero",
            "two identical cable sections in tandem and a triple-tap splitter: zeros of "
            "multiplicity 2 (at 0.5) and 3 (at -0.25), coefficients exact in binary",
            [
                0.75 * c
                for c in np.convolve([1.0, -1.0, 0.25], [1.0, 0.75, 0.1875, 0.015625])
            ],
            [1.0, -0.3],
            "invertible",
        ),
        (
            "fir_only",
            "hand-held microphone radio link: four taps, no feedback",
            [0.9, 0.3, -0.2, 0.05],
            [1.0],
            "invertible",
        ),
        (
            "quarry_hop_resonance",
            "transmitter cabinet on the quarry hop ringing at 3.1 kHz",
            real_poly(conjugate_pairs((0.5, 0.3)) + [0.2], 0.9),
            real_poly(conjugate_pairs((0.97, cabinet))),
            "invertible",
        ),
        (
            "vault_intercom_scaled",
            "vault intercom measured with an unnormalised denominator (a[0] = 2.5)",
            [1.6, -0.4, 0.1],
            [2.5, -1.1, 0.3],
            "invertible",
        ),
        (
            "tie_line_echo24",
            "long tie line between the two studios: echoes 12 and 24 samples late",
            [1.0] + [0.0] * 11 + [0.5] + [0.0] * 11 + [0.2],
            [1.0],
            "invertible",
        ),
        (
            "ring_main_near_circle",
            "ring-main loudspeaker feed with a deep dip near 10 kHz: zeros at radius 0.995",
            real_poly(conjugate_pairs((0.995, 1.3))),
            [1.0],
            "invertible",
        ),
        (
            "north_mast_maxphase",
            "north mast hop whose reflection arrives stronger than the direct path",
            [0.4, 1.0],
            [1.0, -0.2],
            "zeros_outside",
        ),
        (
            "feedback_howl_unstable",
            "talkback loop with too much feedback: the channel's own poles are outside",
            [1.0, 0.3],
            [1.0, -2.1, 1.2],
            "channel_unstable",
        ),
    ]


def leading_zeros(coefficients):
    count = 0
    for c in coefficients:
        if c != 0.0:
            break
        count += 1
    return count


def root_list(roots):
    """Roots as [re, im] pairs, sorted for a stable file (by real part, then imaginary part)."""
    pairs = [[float(np.real(z)), float(np.imag(z))] for z in roots]
    return sorted(pairs)


def place(roots):
    inside = on = outside = 0
    for z in roots:
        r = abs(z)
        if abs(r - 1.0) < CIRCLE_TOLERANCE:
            on += 1
        elif r < 1.0:
            inside += 1
        else:
            outside += 1
    return inside, on, outside


def same_multiset(x, y, tolerance):
    x, y = list(x), list(y)
    if len(x) != len(y):
        return False
    for z in x:
        best = min(range(len(y)), key=lambda i: abs(y[i] - z))
        if abs(y[best] - z) > tolerance * max(1.0, abs(z)):
            return False
        y.pop(best)
    return True


def impulse(length, at=0):
    x = np.zeros(length)
    x[at] = 1.0
    return x


def test_signal():
    rng = np.random.default_rng(SIGNAL_SEED)
    return SIGNAL_SCALE * rng.standard_normal(SIGNAL_LENGTH)


def magnitude_db(b, a, w):
    _, h = scipy.signal.freqz(b, a, worN=[w])
    return 20.0 * math.log10(abs(h[0]))


def refine_peak(b, a, w, step):
    """Golden-section style refinement of one grid maximum between its two neighbours."""
    lo, hi = max(0.0, w - step), min(math.pi, w + step)
    refined = scipy.optimize.minimize_scalar(
        lambda x: -magnitude_db(b, a, x),
        bounds=(lo, hi),
        method="bounded",
        options={"xatol": 1e-12},
    )
    grid_db = magnitude_db(b, a, w)
    if -refined.fun > grid_db:
        return float(refined.x), float(-refined.fun)
    return float(w), grid_db


def peak(b, a):
    """The largest |G| in dB over 0 ≤ ω ≤ π, and every ω where it is reached.

    A channel with evenly spaced echoes has several equal maxima; all of them are listed so a
    test can accept whichever one a search lands on.
    """
    w, h = scipy.signal.freqz(b, a, worN=DENSE_POINTS, include_nyquist=True)
    level = 20.0 * np.log10(np.abs(h))
    i = int(np.argmax(level))
    step = float(w[1] - w[0])
    candidates = []
    for j in range(len(w)):
        left = level[j - 1] if j > 0 else -np.inf
        right = level[j + 1] if j + 1 < len(w) else -np.inf
        if level[j] >= left and level[j] >= right and level[i] - level[j] < 0.01:
            candidates.append(refine_peak(b, a, float(w[j]), step))
    best_db = max(db for _, db in candidates)
    omegas = sorted(x for x, db in candidates if best_db - db < PEAK_TIE_DB)
    return {
        "grid_points": DENSE_POINTS,
        "grid_level_db": float(level[i]),
        "grid_omega": float(w[i]),
        "grid_step": step,
        "level_db": best_db,
        "omegas": omegas,
    }


def inverse_fixture(b, a, bulk, signal):
    stripped = b[bulk:]
    lead = stripped[0]
    inv_b = [x / lead for x in a]
    inv_a = [x / lead for x in stripped]

    h = scipy.signal.lfilter(inv_b, inv_a, impulse(IMPULSE_LENGTH))
    cascade = scipy.signal.lfilter(b, a, h)
    # The cascade must be δ(n − bulk) up to rounding: otherwise this script itself is wrong.
    error = np.max(np.abs(cascade - impulse(IMPULSE_LENGTH, bulk)))
    assert error < 1e-10, f"cascade is not a delayed impulse (error {error})"

    w_coarse = np.linspace(0.0, math.pi, COARSE_POINTS)
    w, g = scipy.signal.freqz(inv_b, inv_a, worN=w_coarse)

    sos = scipy.signal.tf2sos(inv_b, inv_a)
    y_sections = scipy.signal.sosfilt(sos, signal)
    y_direct = scipy.signal.lfilter(inv_b, inv_a, signal)
    scale = np.max(np.abs(y_direct))
    disagreement = np.max(np.abs(y_sections - y_direct)) / scale
    assert disagreement < 1e-11, f"sosfilt and lfilter disagree by {disagreement}"

    return {
        "b": inv_b,
        "a": inv_a,
        "gain": inv_b[0],
        "impulse_response": h,
        "cascade_impulse_response": cascade,
        "magnitude": {"omega": w, "magnitude": np.abs(g)},
        "peak": peak(inv_b, inv_a),
        "sections": sos,
        "signal_output_sections": y_sections,
        "signal_output_direct": y_direct,
    }


def channel_fixture(name, scenario, b, a, expected, signal):
    b = [float(x) for x in b]
    a = [float(x) for x in a]
    bulk = leading_zeros(b)
    stripped = b[bulk:]

    zeros = np.roots(stripped)
    poles = np.roots(a)
    # Cross-check with tf2zpk, each polynomial on its own so that neither a length mismatch nor
    # leading zeros (which tf2zpk drops silently) change what is compared.
    z_cross, _, k = scipy.signal.tf2zpk(stripped, [1.0])
    _, p_cross, _ = scipy.signal.tf2zpk([1.0], a)
    assert same_multiset(zeros, z_cross, 1e-12) and same_multiset(poles, p_cross, 1e-12)

    z_in, z_on, z_out = place(zeros)
    p_in, p_on, p_out = place(poles)
    stable = p_on == 0 and p_out == 0
    zeros_inside = z_on == 0 and z_out == 0
    invertible = stable and zeros_inside
    verdict = (
        "channel_unstable"
        if not stable
        else "invertible"
        if invertible
        else "zeros_on_circle"
        if z_on
        else "zeros_outside"
    )
    assert verdict == expected, f"{name}: expected {expected}, numpy says {verdict}"

    fixture = {
        "channel": name,
        "scenario": scenario,
        "sample_rate": SAMPLE_RATE,
        "circle_tolerance": CIRCLE_TOLERANCE,
        "b": b,
        "a": a,
        "bulk_delay": bulk,
        "b_stripped": stripped,
        "zeros": root_list(zeros),
        "poles": root_list(poles),
        "tf2zpk": {"zeros": root_list(z_cross), "poles": root_list(p_cross), "gain": float(k)},
        "max_zero_radius": float(max(abs(zeros))) if len(zeros) else 0.0,
        "max_pole_radius": float(max(abs(poles))) if len(poles) else 0.0,
        "zeros_inside": z_in,
        "zeros_on_circle": z_on,
        "zeros_outside": z_out,
        "poles_inside": p_in,
        "poles_on_circle": p_on,
        "poles_outside": p_out,
        "channel_stable": stable,
        "invertible": invertible,
        "verdict": verdict,
        "source": {
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "functions": FUNCTIONS,
        },
    }
    if name in CONSTRUCTED_ZEROS:
        fixture["constructed_zeros"] = [
            {"value": value, "multiplicity": m} for value, m in CONSTRUCTED_ZEROS[name]
        ]
    if invertible:
        fixture["inverse"] = inverse_fixture(b, a, bulk, signal)
    return fixture


def generate(out):
    fixture_files.require_pinned_versions()
    os.makedirs(out, exist_ok=True)
    signal = test_signal()
    fixture_files.write(
        os.path.join(out, "signal.json"),
        {
            "signal": signal,
            "seed": SIGNAL_SEED,
            "scale": SIGNAL_SCALE,
            "source": {
                "numpy": np.__version__,
                "function": FUNCTIONS["signal"],
            },
        },
    )
    names = []
    for name, scenario, b, a, expected in channels():
        fixture_files.write(
            os.path.join(out, f"{name}.json"),
            channel_fixture(name, scenario, b, a, expected, signal),
        )
        names.append(name)
    return names


if __name__ == "__main__":
    fixture_files.main(__doc__, generate, DEFAULT_OUT, "reference", "make_fixtures.py")

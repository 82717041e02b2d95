#!/usr/bin/env python3
"""Writes the reference fixtures tests/reference_substitutes.rs reads: the substitute inverses.

When a channel has no stable causal inverse (zeros outside or on the unit circle), or its exact
inverse boosts too much, redress builds a substitute. This script computes, with numpy / scipy
only (versions pinned in requirements.txt and recorded in every file), the numbers those
substitutes must reproduce:

  * reflection of zeros outside the circle (magnitude-only correction):
      - |B(e^jω)| of the original numerator on a grid (scipy.signal.freqz), which the reflected
        numerator must keep;
      - B_min from numpy.roots with each outside zero z moved to 1/conj(z) and the gain raised
        by |z|, and, as an independent route, scipy.signal.minimum_phase (homomorphic,
        half=False, large n_fft), which builds the minimum-phase sequence of the same magnitude
        from the cepstrum without finding a single root;
      - the group delay and phase of the all-pass B/B_min (scipy.signal.group_delay, freqz);
  * the boost cap for a conjugate zero pair (r, ω0): the largest radius r′ whose inverse peaks at
    the cap, found here by a bisection of our own on a dense freqz, and the closed form
    −20·log10((1 − r′)·|1 − r′·e^{−j2ω0}|) at r′;
  * the delayed least-squares FIR inverse: taps by numpy.linalg.lstsq on the convolution matrix
    and by scipy.linalg.solve_toeplitz on the normal equations, the residual error, and the best
    delay from an exhaustive search over every delay;
  * the default policy (reflect, then pull zeros in until the cap holds) rebuilt from its written
    rule with numpy roots and freqz peaks, for the whole invented channels.

The channels are invented links of our own. The JSON is written with make_fixtures.py's stable
emitter (sorted keys, full-precision numbers); a fresh run is compared by value (fixture_compare.py).

Usage:
  make_substitute_fixtures.py [--out DIR]   write fixtures (default: tests/fixtures/substitutes)
  make_substitute_fixtures.py --check       regenerate into a temporary folder and compare values
                                            with the committed files within the tolerances of
                                            fixture_compare.py; exit 1 on any difference beyond
                                            them
"""

import math
import os
import warnings

import numpy as np
import scipy
import scipy.linalg
import scipy.optimize
import scipy.signal

import fixture_files
import make_fixtures as common

REPO = common.REPO
DEFAULT_OUT = os.path.join(REPO, "tests", "fixtures", "substitutes")

SAMPLE_RATE = common.SAMPLE_RATE
CIRCLE_TOLERANCE = common.CIRCLE_TOLERANCE
# Boost cap of redress's default policy (redress::model::policy::DEFAULT_BOOST_CAP_DB).
DEFAULT_CAP_DB = 20.0
# redress::design::CAP_MARGIN_DB: the cap's search aims this far under the cap, so rounding in
# the final coefficients cannot lift the peak over it.
CAP_MARGIN_DB = 1e-6
# redress::design::RADIUS_FLOOR: the cap never pulls zeros in below this radius.
RADIUS_FLOOR = 0.5
# Grid for |B| and |G|: evenly spaced, plus the angle of every zero in the upper half-plane.
MAGNITUDE_POINTS = 512
# The grid redress's all-pass report scans: ω = π·i/2048, i = 1 … 2047.
ALL_PASS_GRID = 2048
# A few frequencies (rad/sample) where the all-pass group delay is compared point by point.
GROUP_DELAY_OMEGAS = [0.05, 0.4, 1.0, 1.7, 2.6, 3.1]
# Frequencies (Hz) redress reports the all-pass phase at.
PHASE_HZ = [100.0, 1000.0, 5000.0, 10000.0]
# FFT length for scipy.signal.minimum_phase: the cepstrum of a zero at radius ρ decays like ρⁿ,
# so the aliasing error is ~ρ^n_fft; 2^20 leaves nothing of even the 0.9995 pair (e^−524).
MINIMUM_PHASE_N_FFT = 1 << 20
# Zeros closer to the circle than this leave scipy.signal.minimum_phase out of a fixture.
CEPSTRAL_MARGIN = 1e-4
# Dense grid for peak searches (then refined by scipy.optimize.minimize_scalar).
PEAK_POINTS = 1 << 16
# Grid maxima within this many dB of the grid's largest are refined (a narrow resonance
# sampled off its centre can look this much lower than it is).
PEAK_CANDIDATE_DB = 30.0
# Bisection on the capped radius stops when the bracket is this narrow.
RADIUS_BRACKET = 1e-13

FUNCTIONS = {
    "zeros": "numpy.roots (b with leading zero taps stripped)",
    "numerator_magnitude": "scipy.signal.freqz",
    "b_min": "numpy.roots, outside zeros z -> 1/conj(z), gain b0*prod|z|, numpy.poly",
    "scipy_minimum_phase": "scipy.signal.minimum_phase(method='homomorphic', half=False)",
    "all_pass_group_delay": "scipy.signal.group_delay((B, B_min))",
    "all_pass_phase": "numpy.angle of scipy.signal.freqz(B) / scipy.signal.freqz(B_min)",
    "peak": "scipy.signal.freqz (dense grid); grid maxima and pole angles (numpy.roots) refined "
    "by scipy.optimize.minimize_scalar",
    "capped_radius": "bisection of our own on the freqz peak",
    "lstsq_taps": "numpy.linalg.lstsq on scipy.linalg.convolution_matrix (augmented for lambda)",
    "toeplitz_taps": "scipy.linalg.solve_toeplitz on the normal equations",
    "impulse_response": "scipy.signal.lfilter",
}


def source():
    return {"numpy": np.__version__, "scipy": scipy.__version__, "functions": FUNCTIONS}


# --- The invented channels. -----------------------------------------------------------------


def pair(radius, angle):
    return [1.0, -2.0 * radius * math.cos(angle), radius * radius]


def channels():
    """(name, scenario, b, a): channels with no exact inverse, or one that boosts too much."""
    trap = 2.0 * math.pi * 5200.0 / SAMPLE_RATE
    pilot = 2.0 * math.pi * 2400.0 / SAMPLE_RATE
    call_tone = 2.0 * math.pi * 1837.0 / SAMPLE_RATE
    return [
        (
            "north_mast_maxphase_fir",
            "north mast hop with no feedback: the reflection one sample late arrives stronger "
            "than the direct path, a weaker one a sample after that (one zero outside)",
            [0.45, 1.0, 0.3],
            [1.0],
        ),
        (
            "quarry_hop_two_reflections",
            "wireless hop across the quarry, direct path partly behind the spoil heap: the silo "
            "echo 2 samples late is weaker, the quarry-face echo 7 samples late is stronger",
            [0.6, 0.0, 0.5, 0.0, 0.0, 0.0, 0.0, 0.75],
            [1.0],
        ),
        (
            "ridge_relay_mixed",
            "ridge relay: an echo stronger than the direct path (zero at -1/0.7) behind a "
            "forgotten 5.2 kHz pilot-tone trap (zeros at radius 0.9995) and a slow pole",
            list(np.convolve([0.7, 1.0], pair(0.9995, trap))),
            [1.0, -0.25],
        ),
        (
            "ob_van_pilot_trap",
            "outside-broadcast van feed with its 2.4 kHz pilot-tone trap still in line: zeros "
            "on the circle, poles at radius 0.999 beside them, and a mild treble lift",
            list(np.convolve([1.0, 0.3], pair(1.0, pilot))),
            pair(0.999, pilot),
        ),
        (
            "intercom_call_tone_trap",
            "intercom feed with a narrow 1837 Hz call-tone trap left in line: zeros on the "
            "circle, poles at radius 0.9995 beside them, the same mild treble lift",
            list(np.convolve([1.0, 0.3], pair(1.0, call_tone))),
            pair(0.9995, call_tone),
        ),
        (
            "gantry_feed_deep_dip",
            "feed to the gantry speakers with a deep dip near 4.3 kHz: every zero inside, but "
            "the exact inverse would boost about 26 dB",
            [1.0, -1.6, 0.9],
            [1.0],
        ),
    ]


# --- Helpers. -------------------------------------------------------------------------------


def response(b, a, omegas):
    _, h = scipy.signal.freqz(b, a, worN=np.asarray(omegas, dtype=float))
    return h


def level_db(b, a, omega):
    """|B/A| at ω in dB; +∞ exactly on a pole that sits on the circle."""
    with np.errstate(divide="ignore", invalid="ignore"):
        value = abs(response(b, a, [omega])[0])
    return math.inf if not math.isfinite(value) else 20.0 * math.log10(value)


def peak(b, a):
    """Largest |B/A| in dB over 0 ≤ ω ≤ π, and where.

    A dense freqz finds the neighbourhoods; every local maximum within PEAK_CANDIDATE_DB of the
    grid's largest, and the angle of every pole (numpy.roots of a), is refined by
    minimize_scalar. The pole angles matter: a resonance narrower than the grid step (a pole
    within ~1e-5 of the circle) can sit between grid points and look lower than a broad one.
    """
    w, h = scipy.signal.freqz(b, a, worN=PEAK_POINTS, include_nyquist=True)
    with np.errstate(divide="ignore"):
        level = 20.0 * np.log10(np.abs(h))
    if not np.all(np.isfinite(level)):
        return math.inf, float(w[int(np.argmax(level))])
    step = float(w[1] - w[0])
    left = np.concatenate(([-np.inf], level[:-1]))
    right = np.concatenate((level[1:], [-np.inf]))
    top = float(np.max(level))
    local = np.nonzero((level >= left) & (level >= right) & (top - level < PEAK_CANDIDATE_DB))
    centres = [float(w[j]) for j in local[0]]
    poles = np.roots(a) if len(a) > 1 else []
    centres += sorted(abs(float(np.angle(p))) for p in poles)
    best = (top, float(w[int(np.argmax(level))]))
    for x in centres:
        refined = scipy.optimize.minimize_scalar(
            lambda v: -level_db(b, a, v),
            bounds=(max(0.0, x - step), min(math.pi, x + step)),
            method="bounded",
            options={"xatol": 1e-12},
        )
        for omega in (x, float(refined.x)):
            value = level_db(b, a, omega)
            if value > best[0]:
                best = (value, omega)
    return best


def poly_from_roots(gain, roots):
    return [gain * float(c) for c in np.real(np.poly(roots))] if len(roots) else [gain]


def clamp(roots, rho):
    return [rho * z / abs(z) if abs(z) > rho else z for z in roots]


# redress::design::MAX_RELAXED_GROUPS and RELAX_SWEEPS: the second pass of the cap.
MAX_RELAXED_GROUPS = 8
RELAX_SWEEPS = 3


def moved_groups(roots, rho):
    """Zeros beyond ρ as conjugate pairs (or single real zeros), closest to the circle first."""
    taken = [False] * len(roots)
    groups = []
    for i, z in enumerate(roots):
        if taken[i] or abs(z) <= rho:
            continue
        taken[i] = True
        group = [i]
        if z.imag != 0.0:
            for j, w in enumerate(roots):
                if not taken[j] and abs(w - z.conjugate()) <= 1e-12 * max(abs(z), 1.0):
                    taken[j] = True
                    group.append(j)
                    break
        groups.append(group)
    groups.sort(key=lambda g: (-abs(roots[g[0]]), abs(np.angle(roots[g[0]]))))
    return groups


def relax(a, gain, roots, rho, cap_db):
    """The cap's second pass, rebuilt from its written rule: each group the common clamp moved
    is let back out on its own, closest to the circle first, as far as the cap allows; repeated
    until nothing moves by more than 1e-12."""
    target = cap_db - CAP_MARGIN_DB
    placed = clamp(roots, rho)
    groups = moved_groups(roots, rho)
    if len(groups) > MAX_RELAXED_GROUPS:
        return placed

    def at(group, r):
        trial = list(placed)
        for i in group:
            trial[i] = r * roots[i] / abs(roots[i])
        return peak(a, poly_from_roots(gain, trial))[0]

    for _ in range(RELAX_SWEEPS):
        largest_step = 0.0
        for group in groups:
            original = abs(roots[group[0]])
            current = abs(placed[group[0]])
            lo, hi = current, original
            if at(group, original) <= target:
                lo = original
            else:
                while hi - lo > RADIUS_BRACKET:
                    mid = 0.5 * (lo + hi)
                    if at(group, mid) <= target:
                        lo = mid
                    else:
                        hi = mid
            largest_step = max(largest_step, lo - current)
            for i in group:
                placed[i] = roots[i] if lo >= original else lo * roots[i] / abs(roots[i])
        if largest_step <= 1e-12:
            break
    return placed


def cap_radius(a, gain, roots, cap_db):
    """Largest ρ with peak(A / (gain·Π(1 − clamp(z, ρ)z⁻¹))) ≤ cap − margin: our own bisection."""
    target = cap_db - CAP_MARGIN_DB
    largest = max(abs(z) for z in roots)
    lo, hi = min(RADIUS_FLOOR, largest), largest
    assert peak(a, poly_from_roots(gain, clamp(roots, lo)))[0] <= target, "cap needs a level cut"
    while hi - lo > RADIUS_BRACKET:
        mid = 0.5 * (lo + hi)
        if peak(a, poly_from_roots(gain, clamp(roots, mid)))[0] <= target:
            lo = mid
        else:
            hi = mid
    return lo


def closed_form_pair_db(radius, omega0):
    """Gain at ω0 of 1/B for the pair (1 − r e^{jω0} z⁻¹)(1 − r e^{−jω0} z⁻¹), in dB."""
    return -20.0 * math.log10((1.0 - radius) * abs(1.0 - radius * np.exp(-2j * omega0)))


# --- Reflection (magnitude-only correction). -----------------------------------------------


def reflected(numerator):
    zeros = np.roots(numerator)
    gain = numerator[0]
    inside = []
    outside = 0
    for z in zeros:
        if abs(z) > 1.0 + CIRCLE_TOLERANCE:
            gain *= abs(z)
            inside.append(1.0 / np.conj(z))
            outside += 1
        else:
            inside.append(z)
    return poly_from_roots(gain, inside), inside, outside


def magnitude_grid(zeros):
    upper = sorted(float(np.angle(z)) for z in zeros if np.imag(z) >= 0.0)
    even = np.linspace(0.0, math.pi, MAGNITUDE_POINTS).tolist()
    return sorted(set(even + upper))


def reflection_fixture(numerator, b_min, zeros):
    grid = magnitude_grid(zeros)
    original = np.abs(response(numerator, [1.0], grid))
    # The script's own two routes to B_min must agree, or the script is wrong.
    kept = np.abs(response(b_min, [1.0], grid))
    assert np.max(np.abs(kept - original)) < 1e-12 * np.max(original), "reflection lost |B|"

    fixture = {
        "b_min": b_min,
        "grid": {"omega": grid, "numerator_magnitude": original},
    }
    # scipy.signal.minimum_phase needs at least 3 taps, and a zero on (or within ~1e-4 of) the
    # circle: its cepstrum decays like ρⁿ/n, so no FFT length leaves the aliasing negligible.
    margin = min(abs(abs(z) - 1.0) for z in zeros)
    if len(numerator) >= 3 and margin > CEPSTRAL_MARGIN:
        with warnings.catch_warnings():
            # It warns that h is not symmetric: it expects a linear-phase filter, but the
            # homomorphic route does not rely on that.
            warnings.simplefilter("ignore", RuntimeWarning)
            cepstral = scipy.signal.minimum_phase(
                np.asarray(numerator),
                method="homomorphic",
                half=False,
                n_fft=MINIMUM_PHASE_N_FFT,
            )
        assert len(cepstral) == len(numerator)
        assert np.max(np.abs(cepstral - b_min)) < 1e-6 * np.max(np.abs(b_min))
        fixture["scipy_minimum_phase"] = {
            "n_fft": MINIMUM_PHASE_N_FFT,
            "coefficients": cepstral,
            "energy": float(np.sum(cepstral**2)),
        }

    w = np.asarray(GROUP_DELAY_OMEGAS)
    _, gd = scipy.signal.group_delay((numerator, b_min), w=w)
    fixture["all_pass_group_delay"] = {"omega": w, "samples": gd}
    scan = math.pi * np.arange(1, ALL_PASS_GRID) / ALL_PASS_GRID
    _, gd_scan = scipy.signal.group_delay((numerator, b_min), w=scan)
    fixture["all_pass_group_delay_range"] = {
        "grid_points": ALL_PASS_GRID - 1,
        "min_samples": float(np.min(gd_scan)),
        "max_samples": float(np.max(gd_scan)),
    }
    omegas = [2.0 * math.pi * f / SAMPLE_RATE for f in PHASE_HZ]
    ratio = response(numerator, [1.0], omegas) / response(b_min, [1.0], omegas)
    fixture["all_pass_phase"] = [[f, float(np.angle(r))] for f, r in zip(PHASE_HZ, ratio)]
    return fixture


# --- The default policy, rebuilt from its written rule. ------------------------------------


def default_policy_fixture(a, numerator, grid):
    """Exact when every zero is inside and the boost is under the cap; otherwise reflect the
    outside zeros, then clamp every zero beyond ρ to radius ρ for the largest ρ that keeps the
    inverse's peak at or under the cap, then let each moved group back out as far as the cap
    allows (redress::design::cap_boost's documented rule)."""
    b_min, zeros, outside = reflected(numerator)
    on_circle = any(abs(abs(z) - 1.0) <= CIRCLE_TOLERANCE for z in zeros)
    if outside == 0 and not on_circle and peak(a, numerator)[0] <= DEFAULT_CAP_DB:
        method, radius, b_capped = "exact", None, list(numerator)
    else:
        method = "minimum_phase"
        if not on_circle and peak(a, b_min)[0] <= DEFAULT_CAP_DB - CAP_MARGIN_DB:
            radius, b_capped = None, b_min
        else:
            radius = cap_radius(a, b_min[0], zeros, DEFAULT_CAP_DB)
            placed = relax(a, b_min[0], zeros, radius, DEFAULT_CAP_DB)
            b_capped = poly_from_roots(b_min[0], placed)
    level, omega = peak(a, b_capped)
    assert level <= DEFAULT_CAP_DB + 1e-9
    inverse = np.abs(response(a, b_capped, grid))
    moved = 0 if radius is None else sum(1 for z, p in zip(zeros, placed) if z != p)
    fixture = {
        "cap_db": DEFAULT_CAP_DB,
        "method": method,
        "reflected": outside,
        "moved_zeros": moved,
        "peak_db": level,
        "peak_omega": omega,
        "inverse_magnitude": inverse,
    }
    if radius is not None:  # left out (JSON has no None here) when the cap did not act
        fixture["radius_limit"] = radius
    return fixture


def channel_fixture(name, scenario, b, a):
    b = [float(x) for x in b]
    a = [float(x) for x in a]
    bulk = common.leading_zeros(b)
    numerator = b[bulk:]
    b_min, _, outside = reflected(numerator)
    zeros = np.roots(numerator)
    reflection = reflection_fixture(numerator, b_min, zeros)
    return {
        "channel": name,
        "scenario": scenario,
        "sample_rate": SAMPLE_RATE,
        "circle_tolerance": CIRCLE_TOLERANCE,
        "b": b,
        "a": a,
        "bulk_delay": bulk,
        "numerator": numerator,
        "zeros": common.root_list(zeros),
        "zeros_outside": outside,
        "denominator_magnitude": np.abs(response(a, [1.0], reflection["grid"]["omega"])),
        "reflection": reflection,
        "default_policy": default_policy_fixture(a, numerator, reflection["grid"]["omega"]),
        "source": source(),
    }


# --- Boost cap on a conjugate pair. --------------------------------------------------------

# Radii at, or just inside, the circle; angles; caps. Once a pair is pulled in, only the capped
# radius matters, so every starting radius must give the same r′ for one (ω0, cap).
#
# The closed form is the gain at ω0 exactly. Near 0 and π the two zeros of the pair sit close
# together and the peak of the capped inverse moves off ω0, so the closed form falls below the
# true peak (by 0.46 dB at ω0 = 0.5 rad, 12 dB cap). The angles below keep the two within
# 0.006 dB at every cap (at π/2 the peak is at ω0 by symmetry); PAIR_OFF_PEAK is the 0.5 rad
# case, kept to show the test compares each quantity with the right reference.
PAIR_RADII = [0.9995, 0.99995, 1.0]
PAIR_ANGLES = [1.2, math.pi / 2.0, 2.0]
PAIR_CAPS = [12.0, 20.0, 24.0]
PAIR_OFF_PEAK = (0.9995, 0.5, 12.0)
# Pairs whose inverse is already under the cap: nothing may move.
PAIR_UNDER_CAP = [(0.9, math.pi / 2.0, 24.0), (0.95, 2.0, 24.0)]
# Closed form and dense peak count as "the same" below this (dB): the test's tolerance.
CLOSED_FORM_AGREEMENT_DB = 0.01


def pair_case(radius, omega0, cap_db):
    zeros = [radius * np.exp(1j * omega0), radius * np.exp(-1j * omega0)]
    uncapped, _ = peak([1.0], pair(radius, omega0))
    case = {"radius": radius, "omega0": omega0, "cap_db": cap_db}
    if math.isfinite(uncapped):  # left out for a pair on the circle (unbounded boost)
        case["uncapped_peak_db"] = uncapped
    if uncapped <= cap_db - CAP_MARGIN_DB:
        case["capped_peak_db"], case["capped_peak_omega"] = peak([1.0], pair(radius, omega0))
        return case
    capped = cap_radius([1.0], 1.0, zeros, cap_db)
    level, omega = peak([1.0], pair(capped, omega0))
    closed = closed_form_pair_db(capped, omega0)
    case.update(
        {
            "capped_radius": capped,
            "capped_peak_db": level,
            "capped_peak_omega": omega,
            "closed_form_at_capped_db": closed,
            "closed_form_is_peak": abs(closed - level) < CLOSED_FORM_AGREEMENT_DB,
        }
    )
    return case


def boost_cap_fixture():
    cases = [
        pair_case(r, w, cap) for r in PAIR_RADII for w in PAIR_ANGLES for cap in PAIR_CAPS
    ]
    assert all(c["closed_form_is_peak"] for c in cases), "pick angles where the forms agree"
    off_peak = pair_case(*PAIR_OFF_PEAK)
    assert not off_peak["closed_form_is_peak"], "the off-peak case no longer shows the offset"
    under = [pair_case(*c) for c in PAIR_UNDER_CAP]
    assert all("capped_radius" not in c for c in under)
    cases += [off_peak] + under
    return {
        "closed_form_agreement_db": CLOSED_FORM_AGREEMENT_DB,
        "radius_floor": RADIUS_FLOOR,
        "radius_bracket": RADIUS_BRACKET,
        "cases": cases,
        "source": source(),
    }


# --- Delayed least-squares FIR inverse. ----------------------------------------------------


def impulse_response(b, a, tail=1e-17):
    """The channel's impulse response, cut where it has fallen below `tail` of its peak."""
    if len(a) == 1:
        return [x / a[0] for x in b]
    h = scipy.signal.lfilter(b, a, common.impulse(4096))
    keep = np.nonzero(np.abs(h) > tail * np.max(np.abs(h)))[0]
    return h[: int(keep[-1]) + 1].tolist()


def lstsq_taps(h, taps, delay, regularization):
    """Minimises ‖h∗g − δ(n−D)‖² + λ·‖h‖²·‖g‖² by least squares on [H; √(λ‖h‖²)·I]."""
    conv = scipy.linalg.convolution_matrix(np.asarray(h), taps, mode="full")
    if delay >= conv.shape[0]:  # δ(n−D) beyond the whole output: the best taps are zero
        return np.zeros(taps)
    target = np.zeros(conv.shape[0])
    target[delay] = 1.0
    if regularization > 0.0:
        weight = math.sqrt(regularization * float(np.dot(h, h)))
        conv = np.vstack((conv, weight * np.eye(taps)))
        target = np.concatenate((target, np.zeros(taps)))
    g, *_ = np.linalg.lstsq(conv, target, rcond=None)
    return g


def toeplitz_taps(h, taps, delay, regularization):
    """Solves (HᵀH + λ‖h‖²I)·g = Hᵀδ_D: the matrix is the autocorrelation of h (Toeplitz)."""
    h = np.asarray(h)
    full = np.correlate(h, h, mode="full")[len(h) - 1 :]
    column = np.zeros(taps)
    column[: min(taps, len(full))] = full[:taps]
    column[0] += regularization * float(np.dot(h, h))
    rhs = np.array([h[delay - i] if 0 <= delay - i < len(h) else 0.0 for i in range(taps)])
    return scipy.linalg.solve_toeplitz(column, rhs)


def residual_energy(h, g, delay):
    y = np.convolve(h, g)
    if len(y) <= delay:
        y = np.concatenate((y, np.zeros(delay + 1 - len(y))))
    y[delay] -= 1.0
    return float(np.dot(y, y))


def fixed_case(name, h, taps, delay, regularization):
    g = lstsq_taps(h, taps, delay, regularization)
    t = toeplitz_taps(h, taps, delay, regularization)
    # Two routes, one answer: if they disagree the problem is too ill-conditioned to be a
    # reference at 1e-9.
    assert np.max(np.abs(g - t)) < 1e-10 * np.max(np.abs(g)), f"{name}: lstsq vs toeplitz"
    return {
        "channel": name,
        "h": h,
        "taps": taps,
        "delay": delay,
        "regularization": regularization,
        "lstsq_taps": g,
        "toeplitz_taps": t,
        "residual_error_db": 10.0 * math.log10(residual_energy(h, g, delay)),
    }


def search_case(name, h, taps, max_delay, regularization):
    """Every delay 0 … max_delay solved by lstsq; the smallest residual ‖h∗g − δ(n−D)‖² wins."""
    errors = [
        residual_energy(h, lstsq_taps(h, taps, d, regularization), d)
        for d in range(max_delay + 1)
    ]
    order = np.argsort(errors, kind="stable")
    best, second = int(order[0]), int(order[1])
    gap_db = 10.0 * math.log10(errors[second] / errors[best])
    # A near tie would make "the" best delay a matter of round-off, not a reference.
    assert gap_db > 1e-6, f"{name}: delays {best} and {second} tie"
    return {
        "channel": name,
        "h": h,
        "taps": taps,
        "max_delay": max_delay,
        "regularization": regularization,
        "residual_error_db": [10.0 * math.log10(e) for e in errors],
        "best_delay": best,
        "runner_up_delay": second,
        "runner_up_gap_db": gap_db,
    }


def budget_case(name, b, taps, budget_seconds, cap_db):
    """What design_inverse's delay search must find: budget in seconds → max delay in samples,
    min(⌊budget·fs⌋, L + len(h) − 2), then the exhaustive search. The cap is set above the
    taps' peak so redress has no reason to raise the regularisation."""
    h = [float(x) for x in b]
    max_delay = min(int(math.floor(budget_seconds * SAMPLE_RATE)), taps + len(h) - 2)
    case = search_case(name, h, taps, max_delay, 0.0)
    g = lstsq_taps(h, taps, case["best_delay"], 0.0)
    taps_peak, _ = peak(g, [1.0])
    assert taps_peak < cap_db
    case.update(
        {
            "budget_seconds": budget_seconds,
            "sample_rate": SAMPLE_RATE,
            "cap_db": cap_db,
            "taps_peak_db": taps_peak,
            "best_taps": g,
        }
    )
    return case


# (channel, taps L, delay D, regularization λ): fixed-delay solutions.
FIR_FIXED = [
    ("north_mast_maxphase_fir", 32, 20, 0.0),
    ("north_mast_maxphase_fir", 64, 40, 1e-3),
    ("quarry_hop_two_reflections", 96, 50, 0.0),
    ("quarry_hop_two_reflections", 128, 5, 1e-4),
    ("ridge_relay_mixed", 80, 30, 1e-2),
    ("gantry_feed_deep_dip", 48, 0, 0.0),
]
# (channel, taps L, largest delay, regularization λ): exhaustive delay searches.
FIR_SEARCH = [
    ("north_mast_maxphase_fir", 24, 25, 0.0),
    ("quarry_hop_two_reflections", 64, 70, 0.0),
    ("quarry_hop_two_reflections", 64, 70, 1e-3),
    ("ridge_relay_mixed", 64, 80, 1e-2),
]
# (FIR channel, taps L, latency budget in seconds, boost cap in dB): the policy's own search.
FIR_BUDGET = [
    ("quarry_hop_two_reflections", 48, 0.0005, 60.0),
    ("north_mast_maxphase_fir", 40, 0.010, 60.0),
]


def least_squares_fixture():
    by_name = {name: (b, a) for name, _, b, a in channels()}
    used = {case[0] for case in FIR_FIXED + FIR_SEARCH}
    h = {name: impulse_response(*by_name[name]) for name in sorted(used)}
    return {
        "fixed_delay": [fixed_case(name, h[name], *rest) for name, *rest in FIR_FIXED],
        "delay_search": [search_case(name, h[name], *rest) for name, *rest in FIR_SEARCH],
        "budget_search": [
            budget_case(name, by_name[name][0], *rest) for name, *rest in FIR_BUDGET
        ],
        "source": source(),
    }


# --- Writing and checking. -----------------------------------------------------------------


def generate(out):
    fixture_files.require_pinned_versions()
    os.makedirs(out, exist_ok=True)
    names = []
    for name, scenario, b, a in channels():
        fixture_files.write(os.path.join(out, f"{name}.json"), channel_fixture(name, scenario, b, a))
        names.append(name)
    fixture_files.write(os.path.join(out, "boost_cap_pairs.json"), boost_cap_fixture())
    fixture_files.write(os.path.join(out, "least_squares_fir.json"), least_squares_fixture())
    return names + ["boost_cap_pairs", "least_squares_fir"]


if __name__ == "__main__":
    fixture_files.main(__doc__, generate, DEFAULT_OUT, "substitute", "make_substitute_fixtures.py")

"""Comparing a fresh run of the reference fixtures with the committed ones, value by value.

numpy, scipy and the OpenBLAS beneath them choose their code paths by processor and environment
(OPENBLAS_CORETYPE, OPENBLAS_L2_SIZE, the vector unit), so a fresh run on another machine differs
from the committed files in the last bits: 0.0 becomes -8.2e-18, 0.4623280131235273 becomes
0.46232801312352784. A byte-for-byte comparison can never be portable. This one is:

  * structure, keys, array lengths, strings, booleans and integers (counts, delays, verdicts)
    must match exactly;
  * every floating-point value must match within the tolerance of the rule below that applies to
    its key, relative to the scale of the quantity it belongs to (the largest magnitude in its
    array, or the value itself for a single number), with an absolute floor for values that
    should be zero.

All tolerances live in RULES, each with its reason. A value perturbed by 1e-9 of its scale is
well outside every one of them (the checker's own tests, test_fixture_compare.py, show both
sides).
"""

import json
import math
import os
import sys
from dataclasses import dataclass

# Double-precision unit roundoff (numpy.finfo(float).eps).
EPS = 2.220446049250313e-16


@dataclass(frozen=True)
class Rule:
    relative: float  # of the scale of the quantity (largest magnitude in the array, or |value|)
    absolute: float  # floor, in the quantity's own unit, for values that should be zero
    reason: str

    def allowed(self, scale):
        return self.relative * scale + self.absolute


DEFAULT = Rule(
    relative=1e-12,
    absolute=1e-15,
    reason="last bits of a well-conditioned result; seen up to 5e-15 relative between OpenBLAS "
    "code paths (least-squares taps), exact zeros seen as 6e-17",
)

# Rules by the last key of the value's path (array indices ignored). The first match wins.
RULES = {
    # Levels in dB, and differences of two levels (runner_up_gap_db): the absolute error of a
    # dB value is that of the linear quantity behind it (1e-12 relative is 8.7e-12 dB), so a
    # small difference of two large levels cannot be held to 1e-12 of itself.
    "db": Rule(
        relative=1e-12,
        absolute=1e-10,
        reason="levels in dB and their differences carry the absolute error of the levels they "
        "come from (seen up to 1.2e-14 dB); floor 1e-10 dB, 1.2e-11 relative in amplitude",
    ),
    # scipy.signal.group_delay((B, B_min)) evaluates Re(z B'/B) - Re(z B_min'/B_min); the zeros
    # B and B_min share (inside or on the circle) make both terms large near the circle and they
    # cancel, leaving an absolute error of order eps/|B|^2 where the true value is 0.
    "group_delay": Rule(
        relative=1e-12,
        absolute=1e-6,
        reason="group delay of B/B_min from scipy.signal.group_delay cancels the shared zeros' "
        "terms, leaving an absolute error near zeros on the circle (seen up to 8e-8 samples); "
        "floor 1e-6 samples",
    ),
}

# The residual ||H g - d||^2 of a least-squares FIR, in dB, down to -200 dB (the script writes
# lower values as -200): a small residual is a difference of nearly equal vectors, so its
# relative error grows as the residual falls; at -104 dB (energy 4e-11, entries near 6e-6) an
# entry's rounding of 1e-16 moves it by about 3e-11 relative.
RULES["lstsq_residual_db"] = Rule(
    relative=1e-9,
    absolute=1e-6,
    reason="least-squares residual in dB, floored at -200 dB by the script; the error of a "
    "small residual is relative to the vectors it is the difference of; floor 1e-6 dB",
)

# Root lists ([re, im] pairs). A root of multiplicity m moves by about eps^(1/m) of the scale
# when the coefficients move by eps (common practice: the perturbation of a multiple root);
# roots are matched as a set, since a sort by real part can swap near-ties.
ROOT_KEYS = {"zeros", "poles"}
ROOT_SIMPLE_RELATIVE = 1e-12
ROOT_MULTIPLE_FACTOR = 16.0
# Roots closer than this (relative to the scale) count as one cluster when deciding m: a triple
# root splits by about eps^(1/3) = 6e-6, well inside it; distinct roots of the fixtures are far
# outside it.
ROOT_CLUSTER_RELATIVE = 1e-3
ROOT_REASON = (
    "roots matched as a set; a simple root within 1e-12 of the largest root's magnitude, a "
    "root of multiplicity m within 16*eps^(1/m) of it (multiple roots move by about eps^(1/m))"
)


def rule_for(path_keys):
    """The rule for a value whose path (dictionary keys only) is `path_keys`."""
    for key in reversed(path_keys):
        if key == "lstsq_residual_db":
            return RULES["lstsq_residual_db"]
        if key.endswith("_db") or key == "db":
            return RULES["db"]
        if "group_delay" in key:
            return RULES["group_delay"]
    return DEFAULT


def is_number(x):
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def kind_of(x):
    if isinstance(x, bool):
        return "boolean"
    if isinstance(x, int):
        return "integer"
    if isinstance(x, float):
        return "number"
    if isinstance(x, str):
        return "string"
    if isinstance(x, list):
        return "array"
    if isinstance(x, dict):
        return "object"
    return "null" if x is None else type(x).__name__


def show(path):
    return path if path else "(top level)"


class Comparison:
    """Walks two parsed JSON values and collects every mismatch as one line of text."""

    def __init__(self, label):
        self.label = label
        self.problems = []

    def fail(self, path, message):
        self.problems.append(f"{self.label}: {show(path)}: {message}")

    def values(self, expected, found, path="", keys=()):
        ek, fk = kind_of(expected), kind_of(found)
        # An integer-valued float written by one run and an integer by the other would be a
        # change of meaning (a count against a measurement): types must match.
        if ek != fk:
            self.fail(path, f"expected {ek} {expected!r}, found {fk} {found!r}")
            return
        if ek == "object":
            self.objects(expected, found, path, keys)
        elif ek == "array":
            self.arrays(expected, found, path, keys)
        elif ek == "number":
            self.numbers([expected], [found], path, keys, scalar=True)
        elif expected != found:
            self.fail(path, f"expected {expected!r}, found {found!r} (must match exactly)")

    def objects(self, expected, found, path, keys):
        for key in sorted(set(expected) - set(found)):
            self.fail(join(path, key), "missing from the fresh run")
        for key in sorted(set(found) - set(expected)):
            self.fail(join(path, key), "in the fresh run but not in the committed file")
        for key in sorted(set(expected) & set(found)):
            self.values(expected[key], found[key], join(path, key), keys + (key,))

    def arrays(self, expected, found, path, keys):
        if len(expected) != len(found):
            self.fail(path, f"expected {len(expected)} elements, found {len(found)}")
            return
        if keys and keys[-1] in ROOT_KEYS and is_root_list(expected) and is_root_list(found):
            self.roots(expected, found, path)
        elif expected and all(isinstance(x, float) for x in expected + found):
            self.numbers(expected, found, path, keys, scalar=False)
        else:
            for i, (e, f) in enumerate(zip(expected, found)):
                self.values(e, f, f"{path}[{i}]", keys)

    def numbers(self, expected, found, path, keys, scalar):
        rule = rule_for(keys)
        finite = [abs(x) for x in expected + found if math.isfinite(x)]
        scale = max(finite, default=0.0)
        for i, (e, f) in enumerate(zip(expected, found)):
            where = path if scalar else f"{path}[{i}]"
            if not (math.isfinite(e) and math.isfinite(f)):
                if not (e == f or (math.isnan(e) and math.isnan(f))):
                    self.fail(where, f"expected {e!r}, found {f!r}")
                continue
            # A single number's scale is its own magnitude; an array element's is the array's.
            own_scale = max(abs(e), abs(f)) if scalar else scale
            allowed = rule.allowed(own_scale)
            if abs(e - f) > allowed:
                self.fail(
                    where,
                    f"expected {e!r}, found {f!r}: differs by {abs(e - f):.3g}, allowed "
                    f"{allowed:.3g} ({rule.reason})",
                )

    def roots(self, expected, found, path):
        e = [complex(re, im) for re, im in expected]
        f = [complex(re, im) for re, im in found]
        if not e:
            return
        scale = max(abs(z) for z in e + f) or 1.0
        unmatched = list(range(len(f)))
        for i, z in enumerate(e):
            m = multiplicity(e, i)
            relative = ROOT_SIMPLE_RELATIVE if m == 1 else ROOT_MULTIPLE_FACTOR * EPS ** (1.0 / m)
            allowed = relative * scale
            best = min(unmatched, key=lambda j: abs(f[j] - z), default=None)
            if best is None or abs(f[best] - z) > allowed:
                near = "none left" if best is None else f"nearest {found[best]!r}"
                moved = "" if best is None else f" at {abs(f[best] - z):.3g}"
                self.fail(
                    f"{path}[{i}]",
                    f"expected root {expected[i]!r} (multiplicity {m}), found {near}{moved}, "
                    f"allowed {allowed:.3g} ({ROOT_REASON})",
                )
                continue
            unmatched.remove(best)


def multiplicity(roots, i):
    """How many of `roots` (complex) lie within the cluster radius of roots[i], itself included."""
    scale = max(abs(z) for z in roots) or 1.0
    return sum(1 for w in roots if abs(w - roots[i]) <= ROOT_CLUSTER_RELATIVE * scale)


def join(path, key):
    return f"{path}.{key}" if path else key


def is_root_list(values):
    return all(
        isinstance(v, list) and len(v) == 2 and all(isinstance(x, float) for x in v)
        for v in values
    )


def compare_values(expected, found, label):
    """Mismatches between two parsed JSON values, one line each (empty when they agree)."""
    comparison = Comparison(label)
    comparison.values(expected, found)
    return comparison.problems


def compare_files(committed_path, fresh_path, label=None):
    with open(committed_path, encoding="utf-8") as f:
        expected = json.load(f)
    with open(fresh_path, encoding="utf-8") as f:
        found = json.load(f)
    return compare_values(expected, found, label or os.path.basename(committed_path))


def compare_folders(committed, fresh):
    """Mismatches between the .json files of two folders: missing, extra, or differing files."""
    present = sorted(f for f in os.listdir(committed) if f.endswith(".json"))
    expected = sorted(f for f in os.listdir(fresh) if f.endswith(".json"))
    problems = []
    for name in sorted(set(expected) | set(present)):
        if name not in present:
            problems.append(f"missing from {committed}: {name}")
        elif name not in expected:
            problems.append(f"committed but no longer generated: {name}")
        else:
            problems += compare_files(
                os.path.join(committed, name), os.path.join(fresh, name), name
            )
    return problems


if __name__ == "__main__":
    if len(sys.argv) != 3:
        sys.exit("usage: fixture_compare.py COMMITTED_DIR FRESH_DIR")
    found_problems = compare_folders(sys.argv[1], sys.argv[2])
    for line in found_problems:
        print(line, file=sys.stderr)
    sys.exit(1 if found_problems else 0)

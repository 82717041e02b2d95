"""Tests of the fixture checker itself (fixture_compare.py), so it cannot quietly pass everything.

Run from the reference virtual environment (scripts/reference/check_fixtures.sh does):
  python -m unittest discover -s scripts/reference -p 'test_fixture_compare.py'

The committed fixtures are the material: every floating-point value moved by a few units in the
last place (numpy.nextafter) and every exact zero replaced by a value of order 1e-17 must pass,
as a run on another processor would; one value moved by 1e-9 of its scale, a missing key, an
extra array element, a changed integer, string or boolean must fail, each with a message naming
the file, the key path and both values.
"""

import copy
import glob
import json
import os
import random
import unittest

import numpy as np

import fixture_compare

HERE = os.path.dirname(os.path.abspath(__file__))
FIXTURES = os.path.join(HERE, "..", "..", "tests", "fixtures")
FIXTURE_SETS = ("reference", "substitutes", "measure")


def committed_fixtures():
    files = []
    for name in FIXTURE_SETS:
        files += sorted(glob.glob(os.path.join(FIXTURES, name, "*.json")))
    return files


def load(path):
    with open(path, encoding="utf-8") as f:
        return json.load(f)


def last_bits_moved(value, rng):
    """A copy with every float moved by 1 to 4 ulps and exact zeros replaced by ~1e-17."""
    if isinstance(value, dict):
        return {k: last_bits_moved(v, rng) for k, v in value.items()}
    if isinstance(value, list):
        return [last_bits_moved(v, rng) for v in value]
    if isinstance(value, float):
        if value == 0.0:
            return rng.choice((-1.0, 1.0)) * rng.uniform(1e-17, 9e-17)
        moved = value
        toward = np.inf if rng.random() < 0.5 else -np.inf
        for _ in range(rng.randint(1, 4)):
            moved = float(np.nextafter(moved, toward))
        return moved
    return value


def float_locations(value, path=(), scale_of=None):
    """(path, value, scale) for every float; scale is the largest magnitude of its array."""
    found = []
    if isinstance(value, dict):
        for k, v in value.items():
            found += float_locations(v, path + (k,))
    elif isinstance(value, list):
        floats = [abs(x) for x in value if isinstance(x, float)]
        scale = max(floats, default=0.0)
        for i, v in enumerate(value):
            if isinstance(v, float):
                found.append((path + (i,), v, scale))
            else:
                found += float_locations(v, path + (i,))
    elif isinstance(value, float):
        found.append((path, value, abs(value)))
    return found


def in_root_list(path):
    return len(path) >= 3 and path[-3] in fixture_compare.ROOT_KEYS


def root_multiplicity(value, path):
    """The multiplicity of the root a float belongs to (1 for anything that is not a root)."""
    if not in_root_list(path):
        return 1
    roots = value
    for step in path[:-2]:
        roots = roots[step]
    return fixture_compare.multiplicity([complex(re, im) for re, im in roots], path[-2])


def floor_for(path):
    keys = tuple(step for step in path if isinstance(step, str))
    return fixture_compare.rule_for(keys).absolute


def set_at(value, path, new):
    target = value
    for step in path[:-1]:
        target = target[step]
    target[path[-1]] = new


def shown(path):
    text = ""
    for step in path:
        text += f"[{step}]" if isinstance(step, int) else (f".{step}" if text else step)
    return text


class LastBitsPass(unittest.TestCase):
    def test_every_committed_fixture_passes_with_its_last_bits_moved(self):
        rng = random.Random(20261202)
        files = committed_fixtures()
        self.assertGreater(len(files), 20)
        for path in files:
            expected = load(path)
            moved = last_bits_moved(expected, rng)
            self.assertNotEqual(json.dumps(moved), json.dumps(expected))
            problems = fixture_compare.compare_values(expected, moved, os.path.basename(path))
            self.assertEqual(problems, [], path)

    def test_roots_pass_in_another_order_and_a_triple_root_passes_its_natural_spread(self):
        # A triple root at 0.5 split by the eps^(1/3) ~ 6e-6 a rounding of the coefficients
        # gives (common practice: the perturbation of a multiple root).
        split = 6e-6
        expected = {"zeros": [[0.5, 0.0], [0.5, 0.0], [0.5, 0.0], [-0.25, 0.5], [-0.25, -0.5]]}
        found = {
            "zeros": [
                [-0.25, -0.5],
                [0.5 + split, 0.0],
                [0.5 - split / 2, split * 0.866],
                [0.5 - split / 2, -split * 0.866],
                [-0.25, 0.5],
            ]
        }
        self.assertEqual(fixture_compare.compare_values(expected, found, "triple.json"), [])


class RealDifferencesFail(unittest.TestCase):
    def test_one_value_moved_by_1e_9_of_its_scale_fails_naming_file_path_and_values(self):
        rng = random.Random(7)
        checked = 0
        for path in committed_fixtures():
            name = os.path.basename(path)
            expected = load(path)
            # Values that carry their array's scale (not the roundoff residue beside it), large
            # enough that 1e-9 of them is above their rule's absolute floor for zeros.
            # Multiple roots are held to their own, looser rule (tested below).
            candidates = [
                (p, v, s)
                for p, v, s in float_locations(expected)
                if abs(v) >= 1e-3 * s
                and 1e-9 * s > 10 * floor_for(p)
                and root_multiplicity(expected, p) == 1
            ]
            for where, value, scale in rng.sample(candidates, min(5, len(candidates))):
                changed = copy.deepcopy(expected)
                # 1e-9 of the quantity's scale, in the direction away from zero.
                moved = value + 1e-9 * scale * (1.0 if value >= 0 else -1.0)
                set_at(changed, where, moved)
                problems = fixture_compare.compare_values(expected, changed, name)
                self.assertEqual(len(problems), 1, (name, where, problems))
                message = problems[0]
                self.assertIn(name, message)
                # A root is reported as the [re, im] pair it belongs to.
                self.assertIn(shown(where[:-1] if in_root_list(where) else where), message)
                self.assertIn(repr(value), message)
                self.assertIn(repr(moved), message)
                checked += 1
        self.assertGreater(checked, 100)

    def test_a_multiple_root_moved_beyond_its_rule_fails(self):
        expected = load(os.path.join(FIXTURES, "reference", "repeated_zero.json"))
        zeros = [complex(re, im) for re, im in expected["zeros"]]
        multiple = [i for i in range(len(zeros)) if fixture_compare.multiplicity(zeros, i) > 1]
        self.assertTrue(multiple, "repeated_zero.json should hold a multiple zero")
        i = multiple[0]
        m = fixture_compare.multiplicity(zeros, i)
        scale = max(abs(z) for z in zeros)
        # Twice the allowed spread for multiplicity m.
        step = 2 * fixture_compare.ROOT_MULTIPLE_FACTOR * fixture_compare.EPS ** (1 / m) * scale
        changed = copy.deepcopy(expected)
        changed["zeros"][i][0] += step
        problems = fixture_compare.compare_values(expected, changed, "repeated_zero.json")
        self.assertEqual(len(problems), 1, problems)
        # Matched as a set: the mismatch may be reported at any root of the cluster.
        self.assertTrue(
            any(f"repeated_zero.json: zeros[{j}]:" in problems[0] for j in multiple), problems
        )
        self.assertIn(f"multiplicity {m}", problems[0])

    def test_a_missing_key_fails(self):
        expected = load(os.path.join(FIXTURES, "reference", "fir_only.json"))
        changed = copy.deepcopy(expected)
        del changed["inverse"]["gain"]
        problems = fixture_compare.compare_values(expected, changed, "fir_only.json")
        self.assertEqual(len(problems), 1)
        self.assertIn("fir_only.json: inverse.gain: missing", problems[0])

    def test_an_extra_array_element_fails(self):
        expected = load(os.path.join(FIXTURES, "reference", "fir_only.json"))
        changed = copy.deepcopy(expected)
        changed["inverse"]["impulse_response"].append(0.0)
        problems = fixture_compare.compare_values(expected, changed, "fir_only.json")
        self.assertEqual(len(problems), 1)
        self.assertIn("inverse.impulse_response", problems[0])
        self.assertIn("expected 256 elements, found 257", problems[0])

    def test_integers_strings_and_booleans_must_match_exactly(self):
        expected = load(os.path.join(FIXTURES, "reference", "north_mast_maxphase.json"))
        changes = {
            "zeros_outside": expected["zeros_outside"] + 1,
            "verdict": expected["verdict"] + " ",
            "invertible": not expected["invertible"],
        }
        for key, new in changes.items():
            changed = copy.deepcopy(expected)
            changed[key] = new
            problems = fixture_compare.compare_values(expected, changed, "north.json")
            self.assertEqual(len(problems), 1, key)
            self.assertIn(f"north.json: {key}: expected {expected[key]!r}, found {new!r}", problems[0])

    def test_an_integer_written_as_a_float_fails(self):
        problems = fixture_compare.compare_values({"bulk_delay": 3}, {"bulk_delay": 3.0}, "f")
        self.assertEqual(len(problems), 1)

    def test_a_simple_root_moved_by_1e_9_fails(self):
        expected = {"poles": [[0.9, 0.1], [0.9, -0.1], [-0.3, 0.0]]}
        found = {"poles": [[0.9, 0.1], [0.9, -0.1], [-0.3 + 1e-9, 0.0]]}
        problems = fixture_compare.compare_values(expected, found, "p.json")
        self.assertEqual(len(problems), 1)
        self.assertIn("p.json: poles[2]", problems[0])

    def test_a_changed_folder_is_reported_file_by_file(self):
        import tempfile

        with tempfile.TemporaryDirectory() as committed, tempfile.TemporaryDirectory() as fresh:
            for folder, value in ((committed, 1.0), (fresh, 1.5)):
                for name in ("a.json", "b.json"):
                    with open(os.path.join(folder, name), "w", encoding="utf-8") as f:
                        json.dump({"x": value if name == "a.json" else 2.0}, f)
            with open(os.path.join(fresh, "c.json"), "w", encoding="utf-8") as f:
                json.dump({}, f)
            problems = fixture_compare.compare_folders(committed, fresh)
            self.assertEqual(len(problems), 2, problems)
            self.assertTrue(any(p.startswith("a.json: x: expected 1.0, found 1.5") for p in problems))
            self.assertTrue(any("no longer generated" in p or "missing from" in p for p in problems))


if __name__ == "__main__":
    unittest.main()

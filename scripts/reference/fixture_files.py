"""Writing reference fixtures and checking committed ones against a fresh run.

Shared by the fixture scripts in this folder: the pinned library versions, stable JSON (sorted
keys, numbers in full precision, short arrays on one line, so a regenerated file reads well in a
diff), and the `--out` / `--check` command line (`--check` compares values within the tolerances
of fixture_compare.py, never bytes).
"""

import argparse
import math
import os
import sys
import tempfile

import numpy as np
import scipy

import fixture_compare

PINNED_NUMPY = "2.4.6"
PINNED_SCIPY = "1.17.1"


def require_pinned_versions():
    if np.__version__ != PINNED_NUMPY or scipy.__version__ != PINNED_SCIPY:
        sys.exit(
            f"need numpy {PINNED_NUMPY} and scipy {PINNED_SCIPY}, found numpy "
            f"{np.__version__} and scipy {scipy.__version__}: "
            "pip install -r scripts/reference/requirements.txt"
        )


# --- Stable JSON: sorted keys, numbers in full precision (repr), short arrays on one line. ---


def number(x):
    if isinstance(x, (bool, np.bool_)):
        return "true" if x else "false"
    if isinstance(x, (int, np.integer)):
        return str(int(x))
    x = float(x)
    if not math.isfinite(x):
        raise ValueError(f"non-finite number {x} cannot go into JSON")
    return repr(x)


def emit(value, depth=0):
    pad = " " * depth
    inner = " " * (depth + 1)
    if isinstance(value, np.ndarray):
        value = value.tolist()
    if isinstance(value, dict):
        items = [
            f'{inner}"{key}": {emit(value[key], depth + 1)}' for key in sorted(value)
        ]
        return "{\n" + ",\n".join(items) + "\n" + pad + "}"
    if isinstance(value, (list, tuple)):
        if any(isinstance(v, (list, tuple, dict, np.ndarray)) for v in value):
            items = [inner + emit(v, depth + 1) for v in value]
            return "[\n" + ",\n".join(items) + "\n" + pad + "]"
        return "[" + ", ".join(emit(v, depth + 1) for v in value) + "]"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    return number(value)


def write(path, value):
    with open(path, "w", encoding="utf-8", newline="\n") as f:
        f.write(emit(value) + "\n")


# --- Command line. ---


def check(generate, committed, kind, script):
    """Regenerates into a temporary folder and compares value by value with `committed`.

    The comparison and its tolerances are in fixture_compare.py: structure, keys, lengths,
    strings, booleans and integers exactly, floating-point values within stated tolerances.
    """
    with tempfile.TemporaryDirectory() as fresh:
        generate(fresh)
        problems = fixture_compare.compare_folders(committed, fresh)
        for p in problems:
            print(p, file=sys.stderr)
        if problems:
            print(
                f"{kind} fixtures differ from a fresh run beyond the stated tolerances "
                f"(scripts/reference/fixture_compare.py): if the change is intended, run "
                f"scripts/reference/{script} and commit the result with the reason",
                file=sys.stderr,
            )
            return 1
        count = len([f for f in os.listdir(fresh) if f.endswith(".json")])
        print(f"{count} {kind} fixtures match a fresh run within the stated tolerances")
        return 0


def main(doc, generate, default_out, kind, script):
    """`--out DIR` writes the fixtures; `--check` compares a fresh run with the committed ones."""
    parser = argparse.ArgumentParser(description=doc.splitlines()[0])
    parser.add_argument("--out", default=default_out, help="folder to write the fixtures to")
    parser.add_argument(
        "--check", action="store_true", help="compare a fresh run with the committed fixtures"
    )
    args = parser.parse_args()
    if args.check:
        sys.exit(check(generate, default_out, kind, script))
    generate(args.out)
    written = len([f for f in os.listdir(args.out) if f.endswith(".json")])
    print(f"wrote {written} fixtures to {args.out}")

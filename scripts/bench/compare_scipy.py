"""Side-by-side speed of redress's filter paths and scipy.signal, as ratios.

Designs seeded random stable filters (poles at radius 0.60-0.95, zeros 0.30-0.90; the kind of
inverse redress runs) at orders 2, 8, 16 and 32, and one noise signal; hands both to redress's
`kernel_rates` example; times scipy.signal.sosfilt and scipy.signal.lfilter on the same signal
and filters in the same run, both as whole-signal calls and as 64-sample streaming calls carrying
`zi` (as a Python user streams audio); prints ratios. Times are the best of several repeats;
only ratios are reported, since the machines are shared and noisy.

A second part runs one long FIR (an invented decaying response of 4096 and 16384 taps) through
redress's partitioned convolution (the structure the pipeline picks for long FIR inverses) and
through scipy.signal.oaconvolve (whole signal) and scipy.signal.lfilter (whole, and streamed in
64-sample calls with zi) on the same taps and signal.

Run through compare_scipy.sh (pinned numpy/scipy in a virtual environment), or directly with
that environment's python from the repository root. Options: --quick (shorter signal, fewer
repeats), --json FILE (write every figure).
"""

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time

import numpy as np
import scipy
import scipy.signal as sig

ORDERS = [2, 8, 16, 32]
CHANNELS = [1, 8]
STREAM_BLOCK = 64
OUR_BLOCKS = [64, 256]  # 64: as the streaming scipy calls; 256: the engine's default block
SEED = 20240611
FIR_TAPS = [4096, 16384]
FIR_CHANNELS = [1, 8]


def design(order, rng):
    """Stable, minimum-phase design of the given (even) order: conjugate pole/zero pairs."""
    pairs = order // 2
    pr = rng.uniform(0.60, 0.95, pairs)
    pa = rng.uniform(0.05, 3.0, pairs)
    zr = rng.uniform(0.30, 0.90, pairs)
    za = rng.uniform(0.05, 3.0, pairs)
    poles = np.concatenate([pr * np.exp(1j * pa), pr * np.exp(-1j * pa)])
    zeros = np.concatenate([zr * np.exp(1j * za), zr * np.exp(-1j * za)])
    b, a = sig.zpk2tf(zeros, poles, 0.8)
    sos = sig.zpk2sos(zeros, poles, 0.8)
    return np.real(b), np.real(a), sos


def best_ns(repeats, samples, run):
    run()
    best = float("inf")
    for _ in range(repeats):
        t = time.perf_counter_ns()
        run()
        best = min(best, (time.perf_counter_ns() - t) / samples)
    return best


def scipy_figures(b, a, sos, x, channels, repeats):
    """ns per sample per channel for the four scipy ways of filtering."""
    xs = np.tile(x, (channels, 1))  # shape (channels, n): one row per channel
    total = xs.size
    out = {}
    out["sosfilt_whole"] = best_ns(repeats, total, lambda: sig.sosfilt(sos, xs, axis=-1))
    out["lfilter_whole"] = best_ns(repeats, total, lambda: sig.lfilter(b, a, xs, axis=-1))
    zi_sos = np.zeros((sos.shape[0], channels, 2))
    zi_tf = np.zeros((channels, max(len(a), len(b)) - 1))
    n = xs.shape[1]

    def sos_stream():
        zi = zi_sos.copy()
        for s in range(0, n, STREAM_BLOCK):
            _, zi = sig.sosfilt(sos, xs[:, s:s + STREAM_BLOCK], axis=-1, zi=zi)

    def tf_stream():
        zi = zi_tf.copy()
        for s in range(0, n, STREAM_BLOCK):
            _, zi = sig.lfilter(b, a, xs[:, s:s + STREAM_BLOCK], axis=-1, zi=zi)

    out["sosfilt_stream64"] = best_ns(repeats, total, sos_stream)
    out["lfilter_stream64"] = best_ns(repeats, total, tf_stream)
    return out


def long_fir(taps, rng):
    """A decaying, sign-changing FIR with a unit first tap, scaled to sum |h| = 1."""
    h = rng.standard_normal(taps) * np.exp(-4.0 * np.arange(taps) / taps)
    h[0] = 1.0
    return h / np.abs(h).sum()


def scipy_fir_figures(h, x, repeats):
    """ns per sample for oaconvolve and lfilter on one channel (scipy's cost is per channel)."""
    n = x.size
    out = {}
    out["oaconvolve_whole"] = best_ns(repeats, n, lambda: sig.oaconvolve(x, h)[:n])
    out["lfilter_whole"] = best_ns(repeats, n, lambda: sig.lfilter(h, [1.0], x))
    zi = np.zeros(h.size - 1)

    def stream():
        z = zi.copy()
        for s in range(0, n, STREAM_BLOCK):
            _, z = sig.lfilter(h, [1.0], x[s:s + STREAM_BLOCK], zi=z)

    out["lfilter_stream64"] = best_ns(max(1, repeats // 2), n, stream)
    return out


def run_ours(repo, cases_path):
    subprocess.run(
        ["cargo", "build", "--release", "--quiet", "--example", "kernel_rates"],
        cwd=repo, check=True)
    exe = os.path.join(repo, "target", "release", "examples", "kernel_rates")
    done = subprocess.run([exe, cases_path], cwd=repo, check=True, capture_output=True, text=True)
    return json.loads(done.stdout)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    parser.add_argument("--json", metavar="FILE")
    args = parser.parse_args()
    repo = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
    n = 1 << 14 if args.quick else 1 << 16
    repeats = 3 if args.quick else 7
    rng = np.random.default_rng(SEED)
    x = rng.standard_normal(n) * 0.25
    designs = {order: design(order, rng) for order in ORDERS}
    cases = []
    for order in ORDERS:
        b, a, _ = designs[order]
        for channels in CHANNELS:
            for block in OUR_BLOCKS:
                cases.append({"name": f"order{order}_ch{channels}", "b": list(b), "a": list(a),
                              "channels": channels, "block": block})
    with tempfile.TemporaryDirectory() as tmp:
        cases_path = os.path.join(tmp, "cases.json")
        with open(cases_path, "w") as f:
            json.dump({"signal": list(x), "repeats": repeats, "cases": cases}, f)
        # Ours before and after scipy, best of both: the same run, the same machine state.
        ours_first = run_ours(repo, cases_path)
        theirs = {}
        for order in ORDERS:
            b, a, sos = designs[order]
            for channels in CHANNELS:
                theirs[(order, channels)] = scipy_figures(b, a, sos, x, channels, repeats)
        ours_second = run_ours(repo, cases_path)
    ours = []
    for r1, r2 in zip(ours_first["results"], ours_second["results"]):
        r = dict(r1)
        for key in ("plain_ns", "block_ns", "bank_ns"):
            if r1[key] is not None:
                r[key] = min(r1[key], r2[key])
        ours.append(r)

    print(f"redress kernels ({ours_first['vector_unit']}) against scipy {scipy.__version__} / "
          f"numpy {np.__version__}; {n} samples, best of {repeats}; scipy streams in "
          f"blocks of {STREAM_BLOCK}, ours runs blocks of {OUR_BLOCKS}")
    print("ratio = scipy time per sample per channel / ours (above 1: ours is faster)")
    print()
    header = (f"{'order':>5} {'ch':>3} {'block':>5} {'structure':<28} {'ours ns':>8} "
              f"{'sos whole':>9} {'sos str64':>9} {'lf whole':>9} {'lf str64':>9} "
              f"{'vs plain':>8} {'bank/1by1':>9}")
    print(header)
    rows = []
    for r in ours:
        order = int(r["name"].split("_")[0][5:])
        channels = r["channels"]
        s = theirs[(order, channels)]
        best = r["bank_ns"] if r["bank_ns"] is not None else r["block_ns"]
        row = {
            "order": order, "channels": channels, "block": r["block"], "structure": r["structure"],
            "ours_ns_per_sample": best, "plain_ns_per_sample": r["plain_ns"],
            "block_ns_per_sample": r["block_ns"], "bank_ns_per_sample": r["bank_ns"],
            "scipy_ns_per_sample": s,
            "ratio_sosfilt_whole": s["sosfilt_whole"] / best,
            "ratio_sosfilt_stream64": s["sosfilt_stream64"] / best,
            "ratio_lfilter_whole": s["lfilter_whole"] / best,
            "ratio_lfilter_stream64": s["lfilter_stream64"] / best,
            "speedup_over_plain": r["plain_ns"] / best,
            "bank_over_one_by_one_plain": (r["plain_ns"] / r["bank_ns"]) if r["bank_ns"] else None,
            "bank_over_one_by_one_block": (r["block_ns"] / r["bank_ns"]) if r["bank_ns"] else None,
        }
        rows.append(row)
        bank = (f"{row['bank_over_one_by_one_plain']:>5.1f}/{row['bank_over_one_by_one_block']:<3.1f}"
                if r["bank_ns"] else f"{'-':>9}")
        print(f"{order:>5} {channels:>3} {r['block']:>5} {r['structure']:<28} {best:>8.2f} "
              f"{row['ratio_sosfilt_whole']:>9.2f} {row['ratio_sosfilt_stream64']:>9.2f} "
              f"{row['ratio_lfilter_whole']:>9.2f} {row['ratio_lfilter_stream64']:>9.2f} "
              f"{row['speedup_over_plain']:>8.2f} {bank}")
    print()
    print("bank/1by1: channel bank against the same channels one at a time "
          "(plain per-sample path / block kernel)")

    fir_rows = fir_part(repo, args.quick, rng)
    if args.json:
        with open(args.json, "w") as f:
            json.dump({"scipy": scipy.__version__, "numpy": np.__version__,
                       "vector_unit": ours_first["vector_unit"], "samples": n,
                       "repeats": repeats, "rows": rows, "fir_rows": fir_rows}, f, indent=1)
    return 0


def fir_part(repo, quick, rng):
    """Long FIRs: ours (partitioned convolution, 64-frame blocks) against oaconvolve/lfilter."""
    n = 1 << 14 if quick else 1 << 16
    repeats = 2 if quick else 3
    x = rng.standard_normal(n) * 0.25
    firs = {taps: long_fir(taps, rng) for taps in FIR_TAPS}
    cases = [{"name": f"fir{taps}_ch{ch}", "b": list(firs[taps]), "a": [1.0], "channels": ch,
              "block": 64} for taps in FIR_TAPS for ch in FIR_CHANNELS]
    with tempfile.TemporaryDirectory() as tmp:
        cases_path = os.path.join(tmp, "fir_cases.json")
        with open(cases_path, "w") as f:
            json.dump({"signal": list(x), "repeats": repeats, "cases": cases}, f)
        ours = run_ours(repo, cases_path)
        theirs = {taps: scipy_fir_figures(firs[taps], x, repeats) for taps in FIR_TAPS}
    print()
    print(f"long FIR, {n} samples, best of {repeats}: ours in 64-frame blocks (ns per sample per "
          f"channel) against scipy on one channel; ratio = scipy / ours")
    print(f"{'taps':>6} {'ch':>3} {'structure':<26} {'ours ns':>9} {'oaconv':>9} {'x':>6} "
          f"{'lfilter':>9} {'x':>6} {'lf str64':>9} {'x':>6}")
    rows = []
    for r in ours["results"]:
        taps = int(r["name"].split("_")[0][3:])
        best = r["bank_ns"] if r["bank_ns"] is not None else r["block_ns"]
        s = theirs[taps]
        row = {"taps": taps, "channels": r["channels"], "structure": r["structure"],
               "ours_ns_per_sample": best, "scipy_ns_per_sample": s,
               "ratio_oaconvolve": s["oaconvolve_whole"] / best,
               "ratio_lfilter_whole": s["lfilter_whole"] / best,
               "ratio_lfilter_stream64": s["lfilter_stream64"] / best}
        rows.append(row)
        print(f"{taps:>6} {r['channels']:>3} {r['structure']:<26} {best:>9.2f} "
              f"{s['oaconvolve_whole']:>9.2f} {row['ratio_oaconvolve']:>6.2f} "
              f"{s['lfilter_whole']:>9.2f} {row['ratio_lfilter_whole']:>6.2f} "
              f"{s['lfilter_stream64']:>9.2f} {row['ratio_lfilter_stream64']:>6.2f}")
    return rows


if __name__ == "__main__":
    sys.exit(main())

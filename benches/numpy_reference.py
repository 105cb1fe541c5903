#!/usr/bin/env python3
"""The speed comparison: `cmrr yield` against a vectorised numpy
implementation of the same Monte Carlo model, run side by side on this
machine, one thread each and two threads each, and the ratio printed.

Run by hand, not by CI (it needs numpy and a release build):

    cargo build --release
    pip install numpy
    python3 benches/numpy_reference.py [--trials 1000000] [--repeats 3]

The model is benches/ratio-model.yaml: a 1 kOhm source per leg into the
10 pF pins of a three-op-amp in-amp (RG 1k, RF1 = RF2 = 24.5k, a unity
difference stage of 10k), every resistor +/-0.1 % uniform, each op-amp
1/A(jf) = 1e-6 + j f / 1 MHz and 1/CMRR(jf) = c0 (1 + j f / 1 kHz) with c0
uniform in +/-1e-5, at the 100 log-spaced frequencies 1 Hz to 100 kHz.

The numpy side does what a Monte Carlo run does, for every trial: draws the
values, solves the exact closed form at every frequency (the source's
divider into the pins, the first stage's 2x2 by its adjugate, the
difference stage), and counts |eps|^2 into one histogram per frequency
(bins off the float's exponent and top 7 mantissa bits, as `cmrr` bins
them) and the requirement's check. It runs in chunks of trials so memory
stays flat, as `cmrr` does. Two threads are two worker processes each
running half the trials.

Both sides are timed as whole runs: `cmrr yield` as a process (start-up,
the budget's verdict with its worst-corner search, and the report
included); numpy from its first draw to its last count (the interpreter's
start-up and import not counted). Throughput is trials x frequencies per
second of wall time; the ratio is cmrr's over numpy's.
"""

import argparse
import json
import multiprocessing
import os
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
MODEL = ROOT / "benches" / "ratio-model.yaml"
BINARY = ROOT / "target" / "release" / "cmrr"

FREQUENCIES = 10.0 ** (5.0 * np.arange(100) / 99.0)
CHECK_INDEX = 34  # the requirement's frequency, 52.1 Hz
MIN_CMRR_DB = 90.0
CHUNK = 2_000

RS, RG, RF, RD = 1e3, 1e3, 24.5e3, 10e3
TOLERANCE = 1e-3
PIN_C = 10e-12
INVERSE_A0, GBW, C0, CORNER = 1e-6, 1e6, 1e-5, 1e3


# What depends on frequency alone, computed once.
F = FREQUENCIES[None, :]
JW_PIN = 2j * np.pi * F * PIN_C
INVERSE_GAIN = INVERSE_A0 + 1j * F / GBW
HALF_CORNER = 0.5 * (1.0 + 1j * F / CORNER)


def solve(rng, trials):
    """|eps|^2 for `trials` trials at every frequency: (trials, 100).

    The exact closed form, every factor common to the common-mode and the
    differential output left out (so no division but the last): the output
    is x e_p + y e_n with x = w_p gs_p (gs_n + jwC), y = w_n gs_n (gs_p + jwC)
    (the source dividers over their common denominator), where (w_p, w_n) =
    (m_p, m_n) adj(M) B is the in-amp's row over its denominator; then
    eps = Adc/Add = 2 (x + y)/(x - y).
    """
    def uniform(nominal, count=1):
        return nominal * (1.0 + TOLERANCE * rng.uniform(-1.0, 1.0, (trials, count)))

    gs = 1.0 / uniform(RS, 2)
    gg = 1.0 / uniform(RG)
    g12 = 1.0 / uniform(RF, 2)
    r = uniform(RD, 4)
    c0 = C0 * rng.uniform(-1.0, 1.0, (trials, 3))
    half_c = [c0[:, k : k + 1] * HALF_CORNER for k in range(3)]
    a = INVERSE_GAIN
    d1, p1 = 1.0 - half_c[0], 1.0 + half_c[0]
    d2, p2 = 1.0 - half_c[1], 1.0 + half_c[1]
    d3, p3 = 1.0 - half_c[2], 1.0 + half_c[2]
    g1, g2 = g12[:, 0:1], g12[:, 1:2]
    # First stage, M o = B v (each op-amp's D y = P v - a o substituted
    # into the inverting-input currents, times D1 D2).
    d12 = d1 * d2
    ad2, ad1 = a * d2, a * d1
    m00 = -(ad2 * (g1 + gg)) - d12 * g1
    m01 = ad1 * gg
    m10 = ad2 * gg
    m11 = -(ad1 * (g2 + gg)) - d12 * g2
    p1d2, p2d1 = p1 * d2, p2 * d1
    # Difference stage numerators (the common 1/(1/A + D3 beta) left out).
    r1, r2, r3, r4 = r[:, 0:1], r[:, 1:2], r[:, 2:3], r[:, 3:4]
    t_p = p3 * (r4 / (r3 + r4))
    t_n = -(d3 * (r2 / (r1 + r2)))
    # (t_p, t_n) adj(M), then times B.
    u0 = t_p * m11 - t_n * m10
    u1 = t_n * m00 - t_p * m01
    w_p = p1d2 * (gg * u1 - (g1 + gg) * u0)
    w_n = p2d1 * (gg * u0 - (g2 + gg) * u1)
    x = w_p * gs[:, 0:1] * (gs[:, 1:2] + JW_PIN)
    y = w_n * gs[:, 1:2] * (gs[:, 0:1] + JW_PIN)
    common = x + y
    differential = x - y
    return 4.0 * (common.real**2 + common.imag**2) / (differential.real**2 + differential.imag**2)


# Histogram bins off the bits of |eps|^2: exponent and top 7 mantissa bits,
# from 1e-30 (300 dB) to 1 (0 dB), the ends clipped.
BIN_SHIFT = np.uint64(45)
BIN_LOW = int(np.array(1e-30).view(np.uint64) >> BIN_SHIFT)
BIN_WIDTH = int(np.array(1.0).view(np.uint64) >> BIN_SHIFT) - BIN_LOW + 1


def count(trials, seed):
    """Run `trials` trials in chunks, counting every frequency's histogram
    and the requirement's check; return the passes and the median |eps|^2
    bin at the check frequency."""
    rng = np.random.default_rng(seed)
    bound = 10.0 ** (-MIN_CMRR_DB / 10.0)
    passes = 0
    points = len(FREQUENCIES)
    histograms = np.zeros(points * BIN_WIDTH, dtype=np.int64)
    offsets = (np.arange(points) * BIN_WIDTH)[None, :]
    done = 0
    while done < trials:
        n = min(CHUNK, trials - done)
        squared = solve(rng, n)
        bins = (squared.view(np.uint64) >> BIN_SHIFT).astype(np.int64) - BIN_LOW
        np.clip(bins, 0, BIN_WIDTH - 1, out=bins)
        histograms += np.bincount((bins + offsets).ravel(), minlength=points * BIN_WIDTH)
        passes += int(np.count_nonzero(squared[:, CHECK_INDEX] <= bound))
        done += n
    return passes


def numpy_run(trials, workers):
    start = time.perf_counter()
    if workers == 1:
        passes = count(trials, 1)
    else:
        shares = [trials // workers + (1 if k < trials % workers else 0) for k in range(workers)]
        with multiprocessing.get_context("fork").Pool(workers) as pool:
            passes = sum(pool.starmap(count, [(share, 1 + k) for k, share in enumerate(shares)]))
    return time.perf_counter() - start, passes


def cmrr_run(trials, threads):
    start = time.perf_counter()
    out = subprocess.run(
        [str(BINARY), "yield", str(MODEL), "--trials", str(trials), "--threads", str(threads), "--format", "json"],
        check=False,
        capture_output=True,
        text=True,
    )
    elapsed = time.perf_counter() - start
    if out.returncode not in (0, 1):
        sys.exit(f"cmrr failed ({out.returncode}): {out.stderr}")
    report = json.loads(out.stdout)
    return elapsed, report


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--trials", type=int, default=1_000_000)
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args()
    if not BINARY.exists():
        sys.exit("build the release binary first: cargo build --release")
    os.environ.setdefault("OMP_NUM_THREADS", "1")
    points = args.trials * len(FREQUENCIES)
    print(f"{args.trials} trials x {len(FREQUENCIES)} frequencies, best of {args.repeats}")
    for threads in (1, 2):
        numpy_times, cmrr_times = [], []
        for _ in range(args.repeats):
            t, passes = numpy_run(args.trials, threads)
            numpy_times.append(t)
            t, report = cmrr_run(args.trials, threads)
            cmrr_times.append(t)
        yield_numpy = passes / args.trials
        yield_cmrr = report["overall_yield"]["fraction"]
        t_numpy, t_cmrr = min(numpy_times), min(cmrr_times)
        print(
            f"{threads} thread(s): numpy {t_numpy:.3f} s ({points / t_numpy:.3g}/s), "
            f"cmrr {t_cmrr:.3f} s ({points / t_cmrr:.3g}/s): ratio {t_numpy / t_cmrr:.1f}x; "
            f"yield at {FREQUENCIES[CHECK_INDEX]:.1f} Hz >= {MIN_CMRR_DB:.0f} dB: numpy {yield_numpy:.4f}, cmrr {yield_cmrr:.4f}"
        )


if __name__ == "__main__":
    main()

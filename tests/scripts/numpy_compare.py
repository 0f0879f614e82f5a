#!/usr/bin/env python3
"""Times a plain vectorised numpy version of the signal benchmark and compares it with Rust.

What it measures: one pass over 1,000,000 samples, the same work as the criterion benchmark
`signal_1m/generate_noise_trigger` in core/benches/signal.rs:
  1. generate the demo tachometer signal of shared/DOMAIN.md section 7 (2.3 V DC + 1.9 V sine at
     60 Hz + 50 Hz hum of 0.075 V peak + 25 mV RMS white Gaussian noise, 1 MHz for 1 s);
  2. apply two-threshold hysteresis (VT+ 2.9 V, VT- 1.7 V) with the usual vectorised trick:
     mark samples at or above VT+ and below VT-, carry the index of the last marked sample forward
     with np.maximum.accumulate, read the state there, and find the edges with np.diff;
  3. interpolate each edge's crossing time between its two samples, as the Rust code does.
The numpy version keeps the noise-free sum too (as the Rust buffers do) but models no propagation
delay or output stage; it uses numpy's own generator, so its noise (not its statistics) differs.
It reports the median of 15 runs after 2 warm-up runs.

How to run (from the repository root):
    cargo bench -p hysteron-core --bench signal        # writes target/criterion/.../estimates.json
    python3 -m pip install numpy                      # if numpy is missing
    python3 tests/scripts/numpy_compare.py            # prints both medians and the ratio
Pass --criterion-dir to point at another target directory. Without criterion results it prints
the numpy timing only.
"""

import argparse
import json
import pathlib
import statistics
import time

import numpy as np

FS = 1e6
N = 1_000_000
VT_UP, VT_LO = 2.9, 1.7


def one_pass(rng):
    t = np.arange(N) * (1.0 / FS)
    clean = 2.3 + 1.9 * np.sin(2 * np.pi * 60.0 * t)
    noisy = clean + 0.075 * np.sin(2 * np.pi * 50.0 * t) + rng.normal(0.0, 0.025, N)
    high = noisy >= VT_UP
    low = noisy < VT_LO
    last = np.where(high | low, np.arange(N), -1)
    np.maximum.accumulate(last, out=last)
    state = np.where(last >= 0, high[np.maximum(last, 0)], noisy[0] >= VT_UP)
    edges = np.flatnonzero(np.diff(state.astype(np.int8))) + 1
    level = np.where(state[edges], VT_UP, VT_LO)
    x0, x1 = noisy[edges - 1], noisy[edges]
    frac = np.clip((level - x0) / np.where(x1 != x0, x1 - x0, 1.0), 0.0, 1.0)
    crossing_s = (edges - 1 + frac) / FS
    return len(crossing_s)


def criterion_median_ms(root):
    path = pathlib.Path(root) / "signal_1m" / "generate_noise_trigger" / "new" / "estimates.json"
    if not path.exists():
        return None
    est = json.loads(path.read_text())
    return est["median"]["point_estimate"] / 1e6


def main():
    here = pathlib.Path(__file__).resolve().parents[2]
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--criterion-dir", default=str(here / "target" / "criterion"))
    ap.add_argument("--runs", type=int, default=15)
    args = ap.parse_args()
    rng = np.random.default_rng(1)
    for _ in range(2):
        one_pass(rng)
    times = []
    edges = 0
    for _ in range(args.runs):
        t0 = time.perf_counter()
        edges = one_pass(rng)
        times.append((time.perf_counter() - t0) * 1e3)
    numpy_ms = statistics.median(times)
    print(f"numpy {np.__version__}: median {numpy_ms:.2f} ms over {args.runs} runs ({edges} edges)")
    rust_ms = criterion_median_ms(args.criterion_dir)
    if rust_ms is None:
        print("no criterion results found: run `cargo bench -p hysteron-core --bench signal` first")
        return
    print(f"rust (criterion median): {rust_ms:.2f} ms")
    print(f"numpy / rust: {numpy_ms / rust_ms:.2f}x")


if __name__ == "__main__":
    main()

"""Latency of one vectorized log-posterior call against a trivial vectorized log-probability.

The demo model (catalogs/demo_disk.ecsv with catalogs/demo_disk.toml) is built as the fit
builds it; for batches of 16, 32 (the demo's walkers) and 1000 prior draws, one call of the
model's log-posterior is timed against one call of ``-0.5 * sum(x**2, axis=1)`` on the same
(n, ndim) array, measured in the same run (best of several repeats of timeit). The goal
(the "log-posterior latency" speed goal) is a ratio of at most 10 at the fit's batch size.

Usage: python benchmarks/logpost.py [--repeats 7] [--sizes 16 32 1000]
"""

from __future__ import annotations

import argparse
import os
import timeit
from pathlib import Path

import numpy as np

from infer.catalog.regions import read_catalog
from infer.inference.config import load_config
from infer.inference.model import Observations, build_model

ROOT = Path(__file__).resolve().parents[1]


def trivial(x: np.ndarray) -> np.ndarray:
    """The by-hand baseline: a vectorized standard-normal log-probability."""
    return -0.5 * np.sum(x**2, axis=1)


def best_per_call(fn, x: np.ndarray, repeats: int) -> float:
    """Best (over ``repeats``) mean seconds per call of ``fn(x)``."""
    timer = timeit.Timer(lambda: fn(x))
    number, _ = timer.autorange()
    return min(timer.repeat(repeat=repeats, number=number)) / number


def demo_model():
    """The demo region's model, built as ``infer fit`` builds it."""
    cfg = load_config(ROOT / "catalogs/demo_disk.toml")
    region = read_catalog(ROOT / "catalogs/demo_disk.ecsv", overrides=dict(cfg.catalog),
                          spacing=cfg.model.spacing)[0]
    return cfg, build_model(cfg, Observations.from_region(region))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--repeats", type=int, default=7)
    ap.add_argument("--sizes", type=int, nargs="+", default=[16, 32, 1000])
    args = ap.parse_args()
    print(f"load average before: {os.getloadavg()} (2 cores)")
    cfg, model = demo_model()
    rng = np.random.default_rng(20261204)
    model(model.prior_sample(rng, 4))          # warm up (compiled kernel, caches)
    print(f"demo model: ndim {model.ndim}, fit's walkers {cfg.sampler.walkers}")
    print(f"{'walkers':>8} {'logpost us':>11} {'trivial us':>11} {'ratio':>7} "
          f"{'us/walker':>10} {'finite':>7}")
    for n in args.sizes:
        x = model.prior_sample(rng, n)
        finite = int(np.sum(np.isfinite(model(x))))
        t_model = best_per_call(model, x, args.repeats)
        t_triv = best_per_call(trivial, x, args.repeats)
        print(f"{n:8d} {t_model * 1e6:11.1f} {t_triv * 1e6:11.2f} {t_model / t_triv:7.1f} "
              f"{t_model / n * 1e6:10.2f} {finite:7d}")
    print(f"goal: ratio <= 10 at {cfg.sampler.walkers} walkers")
    print(f"load average after: {os.getloadavg()} (2 cores)")


if __name__ == "__main__":
    main()

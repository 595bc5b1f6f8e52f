"""Demo disk fit: time to convergence, and vectorized against per-walker log-probability.

1. The demo fit (catalogs/demo_disk.ecsv with catalogs/demo_disk.toml) run to convergence
   with the package's sampler (vectorized log-probability over all walkers at once): wall
   time, steps, autocorrelation time, effective samples per second.
2. The sampler floor, in the same run: emcee with the same walkers, moves, dimension and
   number of steps as the fit, on a trivial vectorized log-probability (an isotropic
   Gaussian), started from the fit's own initial walkers; the ratio fit / floor (goal <= 4x)
   says how much of the fit's time is the model rather than emcee itself.
3. In the same run, the same sampler for a fixed number of steps, once with the vectorized
   log-probability and once with a per-walker Python log-probability (emcee vectorize=False,
   one call per walker): both produce the same chain (same seed, same numbers), so the ratio
   of effective samples per second is the ratio of their speeds.

Usage: python benchmarks/fit.py [--steps 600] [--walkers N] [--no-per-walker]
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time
from pathlib import Path

import emcee
import numpy as np

from infer.catalog.regions import read_catalog
from infer.inference.config import load_config
from infer.inference.model import Observations, build_model
from infer.inference.sampler import _start, make_moves
from infer.pipeline.fit import fit_region

ROOT = Path(__file__).resolve().parents[1]


def isotropic_gaussian(x):
    """The floor's log-probability: a unit isotropic Gaussian, vectorized (n, ndim) -> (n,)."""
    return -0.5 * np.sum(x * x, axis=1)


def sampler_floor(p0, steps: int, moves: str, seed: int) -> float:
    """Seconds emcee needs for ``steps`` steps of ``p0``'s walkers on :func:`isotropic_gaussian`."""
    nw, ndim = p0.shape
    s = emcee.EnsembleSampler(nw, ndim, isotropic_gaussian, vectorize=True, moves=make_moves(moves))
    s.random_state = np.random.RandomState(seed).get_state()
    t0 = time.perf_counter()
    s.run_mcmc(p0, steps, progress=False)
    return time.perf_counter() - t0


class PerWalker:
    """The baseline: the same log-posterior, called once per walker (a Python loop in emcee)."""

    def __init__(self, model):
        self.model = model

    def __call__(self, x):
        return float(self.model(x[None, :])[0])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--steps", type=int, default=600, help="steps for the per-walker comparison")
    ap.add_argument("--walkers", type=int, default=None)
    ap.add_argument("--no-per-walker", action="store_true", help="skip the per-walker comparison")
    args = ap.parse_args()
    print(f"load average before: {os.getloadavg()[0]:.2f} (2 cores)")
    cat = ROOT / "catalogs/demo_disk.ecsv"
    cfg = load_config(ROOT / "catalogs/demo_disk.toml").with_sampler(walkers=args.walkers)
    region = read_catalog(cat, overrides=dict(cfg.catalog), spacing=cfg.model.spacing)[0]

    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        out = fit_region(region, cfg, Path(tmp) / "fit", catalog_bytes=cat.read_bytes(), progress=False,
                         plots=False)
        wall = time.perf_counter() - t0
    d = out.diagnostics
    tau_max = max(v for v in d["autocorrelation_time"].values())
    n_eff = min(v for v in d["effective_samples"].values())
    print("1. demo fit to convergence (vectorized)")
    print(f"   converged {d['converged']}, {d['steps']} steps x {d['walkers']} walkers, "
          f"tau_max {tau_max:.0f} steps, acceptance {d['acceptance_fraction']:.3f}")
    print(f"   wall time {wall:.1f} s (sampling {d['wall_time_s']:.1f} s), "
          f"effective samples (slowest parameter) {n_eff:.0f}, {n_eff / wall:.1f} per second")

    model = build_model(cfg, Observations.from_region(region))
    nw = cfg.sampler.walkers
    _, p0, _ = _start(model, model.prior_sample, model.ndim, nw, 1)
    floor = sampler_floor(p0, d["steps"], cfg.sampler.moves, cfg.sampler.seed)
    print(f"2. sampler floor: emcee, {d['steps']} steps x {nw} walkers x {model.ndim} dimensions, "
          f"moves {cfg.sampler.moves!r}, isotropic Gaussian (vectorized): {floor:.2f} s")
    print(f"   demo fit wall time / floor: {wall:.1f} / {floor:.2f} = {wall / floor:.1f}x "
          f"(sampling only: {d['wall_time_s'] / floor:.1f}x; goal <= 4x)   "
          f"load {os.getloadavg()[0]:.2f}")
    if args.no_per_walker:
        print(f"load average after: {os.getloadavg()[0]:.2f}")
        return
    timings = {}
    chains = {}
    for label, fn, vec in (("vectorized", model, True), ("per-walker", PerWalker(model), False)):
        s = emcee.EnsembleSampler(nw, model.ndim, fn, vectorize=vec, moves=make_moves(cfg.sampler.moves))
        s.random_state = np.random.RandomState(7).get_state()
        t0 = time.perf_counter()
        s.run_mcmc(p0, args.steps, progress=False)
        timings[label] = time.perf_counter() - t0
        chains[label] = s.get_chain()
    same = np.array_equal(chains["vectorized"], chains["per-walker"])
    # same chain -> same autocorrelation time -> effective samples per second scale as 1/time
    print(f"3. {args.steps} steps x {nw} walkers, same seed (identical chains: {same})")
    for k, v in timings.items():
        print(f"   {k:<11} {v:7.2f} s  ({args.steps / v:7.1f} steps/s)")
    print(f"   ratio of effective samples per second, vectorized / per-walker: "
          f"{timings['per-walker'] / timings['vectorized']:.1f}x")
    print(f"load average after: {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()

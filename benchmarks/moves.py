"""Choose the emcee moves by measurement on the demo posteriors.

For each candidate move set, the same demo fit (same start: balls around the MAP modes) is run
for a fixed number of steps; we report the acceptance fraction, the integrated
autocorrelation time (emcee, c = 5) of the slowest parameter, and effective samples per
second. Usage: python benchmarks/moves.py [--steps 4000] [--catalog ... --config ...]
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import emcee
import numpy as np

from infer.catalog.regions import read_catalog
from infer.inference.config import load_config
from infer.inference.model import Observations, build_model
from infer.inference.sampler import _start, autocorr_times

ROOT = Path(__file__).resolve().parents[1]

CANDIDATES = {
    "stretch": lambda: emcee.moves.StretchMove(),
    "de": lambda: emcee.moves.DEMove(),
    "de+snooker (0.8/0.2)": lambda: [(emcee.moves.DEMove(), 0.8), (emcee.moves.DESnookerMove(), 0.2)],
    "stretch+de (0.5/0.5)": lambda: [(emcee.moves.StretchMove(), 0.5), (emcee.moves.DEMove(), 0.5)],
    "de+stretch+snooker (0.5/0.3/0.2)": lambda: [(emcee.moves.DEMove(), 0.5),
                                                  (emcee.moves.StretchMove(), 0.3),
                                                  (emcee.moves.DESnookerMove(), 0.2)],
}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--catalog", default=str(ROOT / "catalogs/demo_disk.ecsv"))
    ap.add_argument("--config", default=str(ROOT / "catalogs/demo_disk.toml"))
    ap.add_argument("--steps", type=int, default=4000)
    ap.add_argument("--walkers", type=int, default=32)
    args = ap.parse_args()
    cfg = load_config(args.config)
    region = read_catalog(args.catalog, overrides=dict(cfg.catalog), spacing=cfg.model.spacing)[0]
    model = build_model(cfg, Observations.from_region(region))
    _, p0, modes = _start(model, model.prior_sample, model.ndim, args.walkers, 1)
    print(f"{args.catalog}: {model.ndim} parameters, {args.walkers} walkers, {args.steps} steps, "
          f"{len(modes)} start mode(s)")
    print(f"{'moves':<34} {'accept':>7} {'tau_max':>8} {'wall s':>7} {'n_eff/s':>8}")
    for name, make in CANDIDATES.items():
        s = emcee.EnsembleSampler(args.walkers, model.ndim, model, vectorize=True, moves=make())
        s.random_state = np.random.RandomState(42).get_state()
        t0 = time.perf_counter()
        s.run_mcmc(p0, args.steps, progress=False)
        wall = time.perf_counter() - t0
        tau = autocorr_times(s.get_chain())
        burn = int(min(2 * tau.max(), args.steps // 2))
        n_eff = args.walkers * (args.steps - burn) / tau.max()
        print(f"{name:<34} {s.acceptance_fraction.mean():>7.3f} {tau.max():>8.1f} {wall:>7.1f} "
              f"{n_eff / wall:>8.1f}")


if __name__ == "__main__":
    main()

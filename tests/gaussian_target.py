"""A correlated Gaussian target with an analytic posterior, for testing the sampler wrapper.

Importable by subprocesses (the kill-and-resume test runs the sampler in a child process).
"""

from __future__ import annotations

import numpy as np

MEAN = np.array([0.5, -1.0, 2.0])
COV = np.array([[1.0, 0.6, 0.1],
                [0.6, 2.0, -0.4],
                [0.1, -0.4, 0.5]])
PREC = np.linalg.inv(COV)


class GaussianLogProb:
    """Vectorized log-density of N(MEAN, COV): (n, 3) -> (n,)."""

    def __call__(self, x):
        d = np.atleast_2d(x) - MEAN
        return -0.5 * np.einsum("ij,jk,ik->i", d, PREC, d)


def prior_draws(rng, n):
    """Broad starting draws (the wrapper's MAP search starts from these)."""
    return MEAN + 3.0 * rng.standard_normal((n, 3))


NAMES = ("a", "b", "c")


def run(chain_path, *, seed=3, max_steps=3000, resume=False, walkers=16, check_every=50,
        tau_factor=50.0, coordinates="original"):
    from infer.inference.config import SamplerOptions
    from infer.inference.sampler import run_sampler

    opts = SamplerOptions(walkers=walkers, max_steps=max_steps, seed=seed, check_every=check_every,
                          tau_factor=tau_factor, coordinates=coordinates)
    return run_sampler(GaussianLogProb(), names=NAMES, prior_draws=prior_draws, options=opts,
                       chain_path=chain_path, run_hash="gaussian-test", resume=resume, progress=False)


if __name__ == "__main__":  # used by the kill test: python gaussian_target.py PATH MAX_STEPS [resume]
    import sys

    run(sys.argv[1], max_steps=int(sys.argv[2]), resume=len(sys.argv) > 3, tau_factor=1e9)

"""The emcee wrapper: recovery of an analytic posterior, reproducibility, resume, stopping rule."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from infer.errors import ChainError
from infer.inference.chainfile import read_chain

HERE = Path(__file__).parent
sys.path.insert(0, str(HERE))
import gaussian_target as gt  # noqa: E402


def test_recovers_analytic_gaussian(tmp_path):
    # Reference: the target is N(MEAN, COV) exactly, so the sample mean and covariance
    # must match the analytic ones and each marginal must pass a Kolmogorov-Smirnov test
    # against scipy.stats.norm (reference library).
    res = gt.run(tmp_path / "chain.h5", max_steps=20000)
    assert res.converged
    tau = res.tau.max()
    burn = int(2 * tau)
    thin = int(np.ceil(tau))
    x = res.chain.chain[burn::thin].reshape(-1, 3)
    n_eff = x.shape[0]
    assert n_eff > 300
    # standard error of a mean is sqrt(var / n_eff); allow 4 standard errors
    se = np.sqrt(np.diag(gt.COV) / n_eff)
    assert np.all(np.abs(x.mean(0) - gt.MEAN) < 4 * se)
    # covariance entries: relative standard error ~ sqrt(2 / n_eff) ~ 0.08 for n_eff ~ 300; allow 4x
    cov = np.cov(x.T)
    scale = np.sqrt(np.outer(np.diag(gt.COV), np.diag(gt.COV)))
    assert np.all(np.abs(cov - gt.COV) / scale < 4 * np.sqrt(2.0 / n_eff))
    for i in range(3):
        # thinned at one autocorrelation time the draws are nearly independent; a KS test at
        # the 0.1% level keeps the false-alarm rate negligible with this fixed seed
        p = stats.kstest(x[:, i], stats.norm(gt.MEAN[i], np.sqrt(gt.COV[i, i])).cdf).pvalue
        assert p > 1e-3


def test_same_seed_gives_identical_chain(tmp_path):
    a = gt.run(tmp_path / "a.h5", max_steps=300, seed=11)
    b = gt.run(tmp_path / "b.h5", max_steps=300, seed=11)
    c = gt.run(tmp_path / "c.h5", max_steps=300, seed=12)
    assert np.array_equal(a.chain.chain, b.chain.chain)
    assert np.array_equal(a.chain.log_prob, b.chain.log_prob)
    assert not np.array_equal(a.chain.chain, c.chain.chain)


def test_cap_before_convergence_is_flagged_not_an_error(tmp_path):
    res = gt.run(tmp_path / "chain.h5", max_steps=120, check_every=40)
    assert res.chain.iteration == 120
    assert res.converged is False


def test_resume_continues_the_same_run(tmp_path):
    # an uninterrupted run of 400 steps against 200 + resume to 400: identical content
    full = gt.run(tmp_path / "full.h5", max_steps=400, seed=5, check_every=50)
    part = tmp_path / "part.h5"
    first = gt.run(part, max_steps=200, seed=5, check_every=50)
    assert first.chain.iteration == 200
    second = gt.run(part, max_steps=400, seed=5, check_every=50, resume=True)
    assert second.resumed_from == 200
    assert np.array_equal(second.chain.chain, full.chain.chain)


def test_resume_refuses_a_different_run(tmp_path):
    from infer.inference.config import SamplerOptions
    from infer.inference.sampler import run_sampler

    gt.run(tmp_path / "chain.h5", max_steps=100)
    with pytest.raises(ChainError, match="different catalog or config"):
        run_sampler(gt.GaussianLogProb(), names=gt.NAMES, prior_draws=gt.prior_draws,
                    options=SamplerOptions(walkers=16, max_steps=200),
                    chain_path=tmp_path / "chain.h5", run_hash="another-run", resume=True,
                    progress=False)


def _iterations(path: Path) -> int:
    try:
        return read_chain(path).iteration
    except ChainError:
        return -1


@pytest.mark.slow
def test_killed_run_resumes_and_continues_the_saved_chain(tmp_path):
    # SIGKILL (not a polite stop) mid-run: the file left behind must be readable, and a
    # resumed run must continue it step for step as an uninterrupted run with the same seed.
    path = tmp_path / "chain.h5"
    env = dict(os.environ, PYTHONPATH=str(HERE.parent) + os.pathsep + str(HERE))
    proc = subprocess.Popen([sys.executable, str(HERE / "gaussian_target.py"), str(path), "100000"],
                            env=env)
    deadline = time.time() + 60
    while time.time() < deadline and _iterations(path) < 150:
        time.sleep(0.05)
    time.sleep(0.137)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    saved = read_chain(path)
    assert saved.iteration >= 150
    target = saved.iteration + 100
    resumed = gt.run(path, max_steps=target, resume=True, tau_factor=1e9)
    assert resumed.resumed_from == saved.iteration
    assert resumed.chain.iteration == target
    assert np.array_equal(resumed.chain.chain[: saved.iteration], saved.chain)
    reference = gt.run(tmp_path / "ref.h5", max_steps=target, tau_factor=1e9)
    assert np.array_equal(resumed.chain.chain, reference.chain.chain)

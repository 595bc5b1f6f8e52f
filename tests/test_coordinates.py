"""Whitened sampler coordinates: the affine map, the Laplace covariance, sampling and resume."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

from infer.inference import sampler as sampler_module
from infer.inference.coordinates import AffineMap, InSamplerCoordinates, laplace_covariance

HERE = Path(__file__).parent
sys.path.insert(0, str(HERE))
import gaussian_target as gt  # noqa: E402


def test_affine_map_matches_numpy_matrix_product_and_inverts():
    # reference: numpy's matrix product and linear solver
    rng = np.random.default_rng(4)
    m = rng.standard_normal((3, 3)) + 3 * np.eye(3)
    amap = AffineMap(rng.standard_normal(3), m)
    y = rng.standard_normal((50, 3))
    x = amap.to_model(y)
    np.testing.assert_allclose(x, amap.shift + y @ m.T, rtol=1e-13, atol=1e-13)
    np.testing.assert_allclose(amap.to_sampler(x), y, rtol=1e-12, atol=1e-12)
    # round trip through the chain file's JSON form is exact
    back = AffineMap.from_info(amap.to_info())
    assert np.array_equal(back.shift, amap.shift) and np.array_equal(back.matrix, amap.matrix)


def test_affine_map_rows_do_not_depend_on_the_batch():
    # the stored chain must be exactly the points the model saw, whatever the batch size
    rng = np.random.default_rng(5)
    amap = AffineMap(rng.standard_normal(3), rng.standard_normal((3, 3)) + 2 * np.eye(3))
    y = rng.standard_normal((32, 3))
    whole = amap.to_model(y)
    one_by_one = np.concatenate([amap.to_model(y[i:i + 1]) for i in range(32)])
    assert np.array_equal(whole, one_by_one)
    assert np.array_equal(amap.to_model(y[None])[0], whole)


def test_laplace_covariance_of_a_gaussian_is_its_covariance():
    # the Hessian of the log-density of N(m, C) is -C^-1 (analytic); central differences of a
    # quadratic are exact up to rounding, and prior widths of 1e4 regularise by ~1e-8
    cov = laplace_covariance(gt.GaussianLogProb(), gt.MEAN, step=np.full(3, 1e-2),
                             width=np.full(3, 1e4))
    np.testing.assert_allclose(cov, gt.COV, rtol=1e-6, atol=1e-6)


def test_laplace_covariance_is_none_where_the_neighbours_are_impossible():
    def edge(x):
        v = gt.GaussianLogProb()(x)
        return np.where(np.atleast_2d(x)[:, 0] > gt.MEAN[0], -np.inf, v)

    assert laplace_covariance(edge, gt.MEAN, step=np.full(3, 1e-2), width=np.ones(3)) is None


def test_whitened_sampling_recovers_the_correlated_gaussian(tmp_path):
    # Reference: the target is N(MEAN, COV) exactly (tests/gaussian_target.py); the sampler
    # moves in whitened coordinates but the chain must still have the analytic mean and
    # covariance. Tolerances as in test_sampling.py: 4 standard errors of a mean
    # (sqrt(var / n_eff)) and 4 relative standard errors of a covariance (sqrt(2 / n_eff)).
    res = gt.run(tmp_path / "chain.h5", max_steps=20000, coordinates="whitened")
    assert res.converged
    info = res.chain.info["coordinates"]
    assert not AffineMap.from_info(info).is_identity
    tau = res.tau.max()
    x = res.chain.chain[int(2 * tau)::int(np.ceil(tau))].reshape(-1, 3)
    n_eff = x.shape[0]
    assert n_eff > 300
    se = np.sqrt(np.diag(gt.COV) / n_eff)
    assert np.all(np.abs(x.mean(0) - gt.MEAN) < 4 * se)
    scale = np.sqrt(np.outer(np.diag(gt.COV), np.diag(gt.COV)))
    assert np.all(np.abs(np.cov(x.T) - gt.COV) / scale < 4 * np.sqrt(2.0 / n_eff))
    # every stored row is a point the model was evaluated at: its log-probability is stored
    lp = gt.GaussianLogProb()(res.chain.chain.reshape(-1, 3)).reshape(res.chain.log_prob.shape)
    assert np.array_equal(lp, res.chain.log_prob)


def test_whitened_resume_reuses_the_stored_map(tmp_path, monkeypatch):
    # 200 steps + resume to 400 must equal an uninterrupted 400-step run bit for bit, and the
    # resume must take the map from the file, not form it again
    full = gt.run(tmp_path / "full.h5", max_steps=400, seed=5, coordinates="whitened")
    part = tmp_path / "part.h5"
    first = gt.run(part, max_steps=200, seed=5, coordinates="whitened")
    assert first.chain.sampler_coords is not None

    def refuse(*a, **k):
        raise AssertionError("the resume formed a new coordinate map")

    monkeypatch.setattr(sampler_module, "whitening_map", refuse)
    second = gt.run(part, max_steps=400, seed=5, coordinates="whitened", resume=True)
    assert second.resumed_from == 200
    assert second.chain.info["coordinates"] == full.chain.info["coordinates"]
    assert np.array_equal(second.chain.chain, full.chain.chain)
    assert np.array_equal(second.chain.log_prob, full.chain.log_prob)


def test_whitened_same_seed_gives_identical_chain(tmp_path):
    a = gt.run(tmp_path / "a.h5", max_steps=200, seed=11, coordinates="whitened")
    b = gt.run(tmp_path / "b.h5", max_steps=200, seed=11, coordinates="whitened")
    assert np.array_equal(a.chain.chain, b.chain.chain)


def test_original_coordinates_store_the_identity(tmp_path):
    res = gt.run(tmp_path / "chain.h5", max_steps=100)
    assert AffineMap.from_info(res.chain.info["coordinates"]).is_identity
    assert res.chain.sampler_coords is None


def test_in_sampler_coordinates_evaluates_the_mapped_points():
    amap = AffineMap(np.array([1.0, 2.0, 3.0]), np.diag([2.0, 3.0, 4.0]))
    f = InSamplerCoordinates(gt.GaussianLogProb(), amap)
    y = np.array([[0.1, 0.2, 0.3]])
    assert f(y)[0] == pytest.approx(gt.GaussianLogProb()(np.array([[1.2, 2.6, 4.2]]))[0], rel=1e-14)

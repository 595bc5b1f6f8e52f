"""PSIS-LOO comparison: against the exact leave-one-out of a conjugate normal model, verdicts, folder checks.

Exact reference: for y_i ~ N(mu, 1) with a flat prior on mu, the posterior is
N(ybar, 1/n) and the leave-one-out predictive of y_i is
N(ybar_-i, 1 + 1/(n - 1)) (conjugate normal model, e.g. Gelman et al.,
Bayesian Data Analysis, 3rd ed., sec. 2.5), so elpd_loo has a closed form that
PSIS-LOO (Vehtari, Gelman & Gabry 2017, Stat. Comput. 27, 1413) must reproduce.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from infer.cli import main
from infer.errors import InferError
from infer.inference.comparison import LooResult, compare_fits, compare_loo, psis_loo

S = 4000


def _normal_model(y: np.ndarray, *, shift: float = 0.0, seed: int = 0) -> np.ndarray:
    """Pointwise log-likelihood (S, n) of y under posterior draws of mu (+ shift), sd 1."""
    n = y.size
    mu = np.random.default_rng(seed).normal(y.mean() + shift, 1.0 / np.sqrt(n), S)
    return stats.norm.logpdf(y[None, :], loc=mu[:, None], scale=1.0)


def _exact_elpd(y: np.ndarray) -> np.ndarray:
    n = y.size
    loo_mean = (y.sum() - y) / (n - 1)
    return stats.norm.logpdf(y, loc=loo_mean, scale=np.sqrt(1.0 + 1.0 / (n - 1)))


def test_psis_loo_matches_exact_conjugate_normal():
    pytest.importorskip("arviz_stats")    # PSIS-LOO (the report extra)
    y = np.random.default_rng(11).normal(0.3, 1.0, 40)
    r = psis_loo(_normal_model(y))
    exact = _exact_elpd(y)
    # importance sampling with 4000 draws and k < 0.5: pointwise error ~ 1e-3
    np.testing.assert_allclose(r.elpd_i, exact, atol=0.01)
    assert r.elpd == pytest.approx(exact.sum(), abs=0.1)
    assert r.se == pytest.approx(np.sqrt(y.size * np.var(exact)), rel=0.02)
    # p_loo = lppd - elpd_loo, with the exact lppd_i = ln N(y_i; ybar, 1 + 1/n)
    lppd = stats.norm.logpdf(y, loc=y.mean(), scale=np.sqrt(1.0 + 1.0 / y.size))
    assert r.p_loo == pytest.approx(np.sum(lppd - exact), abs=0.05)
    assert np.all(r.pareto_k < 0.5)


def test_loo_prefers_the_generating_model():
    pytest.importorskip("arviz_stats")    # PSIS-LOO (the report extra)
    y = np.random.default_rng(5).normal(0.0, 1.0, 60)
    good = psis_loo(_normal_model(y, seed=1))
    bad = psis_loo(_normal_model(y, shift=1.5, seed=2))       # predicts a mean 1.5 sd off
    c = compare_loo(good, bad, names=("generating", "shifted"))
    # expected difference ~ n 1.5^2 / 2 = 67, many standard errors
    assert c.delta > 30
    assert c.delta > 4 * c.se
    assert c.preferred == 0
    assert c.verdict.startswith("The data favour generating")
    flipped = compare_loo(bad, good, names=("shifted", "generating"))
    assert flipped.preferred == 1 and flipped.delta == pytest.approx(-c.delta)


def test_no_preference_when_models_predict_the_same():
    pytest.importorskip("arviz_stats")    # PSIS-LOO (the report extra)
    y = np.random.default_rng(8).normal(0.0, 1.0, 60)
    a = psis_loo(_normal_model(y, seed=3))
    b = psis_loo(_normal_model(y, seed=4))                    # same model, other posterior draws
    c = compare_loo(a, b)
    assert abs(c.delta) < 1.0
    assert c.preferred is None
    assert c.verdict.startswith("No meaningful preference")
    md = c.to_markdown()
    assert "## Verdict" in md and "No meaningful preference" in md


def test_small_difference_is_not_overstated():
    # a consistent but small gain: |delta| = 3 with a tiny SE is still "no meaningful preference"
    # (|elpd difference| < 4 is small: Sivula, Magnusson, Matamoros & Vehtari, arXiv:2008.10296;
    # the further "more than 2 standard errors" rule is common practice)
    base = dict(p_loo=1.0, pareto_k=np.zeros(30), p_loo_i=np.zeros(30), n_samples=100)
    a = LooResult(elpd=-30.0 + 3.0, se=1.0, elpd_i=np.full(30, -0.9), **base)
    b = LooResult(elpd=-30.0, se=1.0, elpd_i=np.full(30, -1.0) + 1e-3 * np.arange(30) % 2, **base)
    c = compare_loo(a, b)
    assert 2.5 < c.delta < 3.5 and c.delta > 2 * c.se
    assert c.preferred is None
    assert "smaller than 4" in c.verdict


def test_high_pareto_k_is_reported():
    # k > 0.7: the importance-sampling estimate is unreliable (Vehtari, Gelman & Gabry 2017,
    # Stat. Comput. 27, 1413; Vehtari, Simpson, Gelman, Yao & Gabry 2024, JMLR 25(72), 1)
    k = np.array([0.1, 0.75, 0.2, 1.3])
    base = dict(p_loo=1.0, p_loo_i=np.zeros(4), n_samples=100, labels=("a", "b", "c", "d"))
    a = LooResult(elpd=-4.0, se=1.0, elpd_i=-np.ones(4), pareto_k=k, **base)
    b = LooResult(elpd=-4.0, se=1.0, elpd_i=-np.ones(4), pareto_k=np.zeros(4), **base)
    c = compare_loo(a, b, names=("A", "B"))
    assert any(w.startswith("A: 2 of 4 observations have Pareto k > 0.7 (b, d)") for w in c.warnings)
    assert not any(w.startswith("B:") for w in c.warnings)


def test_outlier_gives_large_pareto_k():
    # one observation 8 sd away dominates its own leave-one-out weights
    pytest.importorskip("arviz_stats")    # PSIS-LOO (the report extra)
    y = np.r_[np.random.default_rng(2).normal(0.0, 1.0, 9), 8.0]
    r = psis_loo(_normal_model(y))
    assert r.pareto_k[-1] > 0.7
    assert r.bad_k() == ["9"]


def test_psis_loo_rejects_bad_arrays():
    with pytest.raises(InferError, match="shape"):
        psis_loo(np.zeros(10))
    ll = np.zeros((100, 3))
    ll[0, 0] = -np.inf
    with pytest.raises(InferError, match="non-finite"):
        psis_loo(ll)


# -------------------------------------------------------------- fit folders
def _fake_fit(d: Path, catalog: Path, ll: np.ndarray, labels, region="r", diffusion=None):
    d.mkdir()
    (d / "run.json").write_text(json.dumps({"run_hash": "x", "region": region,
                                            "source": str(catalog)}))
    np.savez(d / "pointwise.npz", loglike=ll, labels=np.array(labels, dtype=str))
    if diffusion:
        (d / "config.toml").write_text(f'[model]\ndiffusion = "{diffusion}"\n')
    return d


@pytest.fixture
def two_fits(tmp_path):
    cat = tmp_path / "cat.ecsv"
    cat.write_text("catalog bytes\n")
    y = np.random.default_rng(1).normal(0.0, 1.0, 12)
    labels = [f"spacing:{i}" for i in range(12)]
    d1 = _fake_fit(tmp_path / "good", cat, _normal_model(y, seed=1), labels)
    d2 = _fake_fit(tmp_path / "bad", cat, _normal_model(y, shift=3.0, seed=2), labels)
    return d1, d2, cat, y, labels


def _snapshot(d: Path):
    return {p.name: (p.stat().st_size, p.stat().st_mtime_ns) for p in sorted(d.iterdir())}


def test_compare_fits_and_cli_write_compare_md(two_fits, capsys):
    pytest.importorskip("arviz_stats")    # PSIS-LOO (the report extra)
    d1, d2, *_ = two_fits
    c = compare_fits(d1, d2)
    assert c.preferred == 0 and c.names == ("good", "bad")
    rc = main(["report", str(d1), str(d2), "--compare"])
    out, err = capsys.readouterr()
    assert rc == 0, err
    text = (d1 / "compare.md").read_text()
    assert "The data favour good" in text and "spacing:11" in text
    assert "favour good" in out
    other = d2.parent / "elsewhere.md"
    assert main(["report", str(d1), str(d2), "--compare", "--out", str(other)]) == 0
    assert other.is_file()


def test_compare_refuses_other_catalog_or_observations(two_fits, tmp_path, capsys):
    d1, _, cat, y, labels = two_fits
    other_cat = tmp_path / "other.ecsv"
    other_cat.write_text("different bytes\n")
    d3 = _fake_fit(tmp_path / "othercat", other_cat, _normal_model(y), labels)
    d4 = _fake_fit(tmp_path / "otherobs", cat, _normal_model(y[:-1]), labels[:-1])
    d5 = _fake_fit(tmp_path / "otherregion", cat, _normal_model(y), labels, region="s")
    before = _snapshot(d1)
    for d, msg in ((d3, "different catalogs"), (d4, "not over the same observations"),
                   (d5, "different regions")):
        with pytest.raises(InferError, match=msg):
            compare_fits(d1, d)
        rc = main(["report", str(d1), str(d), "--compare"])
        _, err = capsys.readouterr()
        assert rc == 2
        assert msg in err and len(err.strip().splitlines()) == 1
    assert _snapshot(d1) == before                  # no compare.md left behind


def test_compare_cli_argument_errors(two_fits, capsys):
    d1, d2, *_ = two_fits
    assert main(["report", str(d1), "--compare"]) == 2
    assert "exactly two" in capsys.readouterr().err
    assert main(["report", str(d1), str(d2), "--compare", "--forecast-field", "20%"]) == 2
    assert "single report" in capsys.readouterr().err
    os.remove(d2 / "pointwise.npz")
    assert main(["report", str(d1), str(d2), "--compare"]) == 2
    assert "pointwise.npz is missing" in capsys.readouterr().err

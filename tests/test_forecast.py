"""Measurement forecast by importance reweighting, against the conjugate normal result.

A normal posterior N(0, s0^2) of ln x, updated by a log-normal measurement of
precision s_m, has sd (s0^-2 + s_m^-2)^(-1/2) whatever the measured value (the
conjugate normal-normal update, e.g. Gelman et al., Bayesian Data Analysis,
3rd ed., sec. 2.5). The expected width ratio is therefore exactly
s_m / sqrt(s0^2 + s_m^2). For a second quantity y jointly normal with ln x
(correlation rho), Gaussian conditioning gives
var(y | measurement) = var(y) (1 - rho^2 s0^2 / (s0^2 + s_m^2)).
"""

from __future__ import annotations

import numpy as np
import pytest

from infer.errors import InferError
from infer.inference.forecast import forecast, kish_ess, parse_precision, weighted_quantiles

N = 20_000


def _normal_samples(s0: float, seed: int = 3) -> np.ndarray:
    return np.exp(np.random.default_rng(seed).normal(0.0, s0, N))


@pytest.mark.parametrize(("s0", "sm"), [(1.0, 0.5), (0.5, 0.5), (1.0, 0.2), (0.3, 0.6)])
def test_width_ratio_matches_conjugate_normal(s0, sm):
    res = forecast({"field": _normal_samples(s0)}, "field", sm, n_draws=200, seed=1)
    expected = sm / np.sqrt(s0**2 + sm**2)
    t = res.targets["field"]
    assert t.log
    # the effective sample size of normal weights is N s_m sqrt(s_m^2 + 2 s0^2) / (s_m^2 + s0^2), >= 5000
    # here (s_m / s0 = 0.2), so one weighted 68% width scatters by ~1.5% and the median of
    # 200 draws by less; 4% leaves room without hiding a wrong formula
    # (a ratio built from variances instead of sd would be off by 20-60% here)
    assert t.ratio_median == pytest.approx(expected, rel=0.04)
    # the conjugate width does not depend on the measured value: the spread over draws is small
    assert t.ratio_p84 - t.ratio_p16 < 0.08
    assert not res.warnings


def test_correlated_target_follows_gaussian_conditioning():
    rng = np.random.default_rng(7)
    s0, sy, rho, sm = 0.8, 2.0, 0.9, 0.3
    z = rng.normal(0.0, s0, N)
    y = rho * sy / s0 * z + np.sqrt(1 - rho**2) * sy * rng.standard_normal(N)
    res = forecast({"field": np.exp(z), "y": y}, "field", sm, targets=["y"], seed=2)
    t = res.targets["y"]
    assert not t.log                               # y takes negative values: widths in its unit
    expected = np.sqrt(1.0 - rho**2 * s0**2 / (s0**2 + sm**2))
    assert t.ratio_median == pytest.approx(expected, rel=0.05)


def test_uninformative_measurement_changes_nothing():
    # a measurement 20x wider than the posterior: ratio (1 + 1/400)^(-1/2) = 0.9988
    res = forecast({"temperature": _normal_samples(0.05)}, "temperature", 1.0, seed=0)
    assert res.targets["temperature"].ratio_median == pytest.approx(0.9988, abs=0.01)
    assert res.ess_median > 0.99 * N


def test_degenerate_reweighting_warns_and_suggests_the_measurement_as_data():
    res = forecast({"surface_density": _normal_samples(2.0)}, "column_density", 0.001, seed=0)
    assert res.degenerate
    assert res.ess_median < 100
    assert "too degenerate" in res.warnings[0]
    assert "[measurements] entry surface_density" in res.warnings[0]
    assert "degenerate" in res.sentence()
    assert "Warning" in res.to_markdown()


def test_kish_ess_reference_values():
    # (sum w)^2 / sum w^2 (Kish 1965, Survey Sampling): n for equal weights, 1 for one weight
    assert kish_ess(np.ones(50)) == pytest.approx(50.0)
    assert kish_ess(np.r_[1.0, np.zeros(9)]) == pytest.approx(1.0)
    w = np.array([1.0, 2.0, 3.0])
    assert kish_ess(w) == pytest.approx(36.0 / 14.0)


def test_weighted_quantiles_equal_weights_match_numpy_hazen():
    x = np.random.default_rng(0).normal(size=501)
    q = [0.16, 0.5, 0.84]
    got = weighted_quantiles(x, np.ones((1, x.size)), q)[0]
    # the midpoint rule (cumulative weight minus half) is numpy's "hazen" definition
    np.testing.assert_allclose(got, np.quantile(x, q, method="hazen"), rtol=0, atol=1e-12)


def test_weighted_quantiles_importance_weights_recover_target():
    from scipy import stats

    x = np.random.default_rng(1).uniform(-6, 6, 60_000)
    w = stats.norm.pdf(x, loc=1.0, scale=0.5)[None, :]
    got = weighted_quantiles(x, w, [0.16, 0.84])[0]
    # n_eff ~ 0.15 N = 9000; the standard error of the 16% quantile is
    # sqrt(0.16 0.84 / 9000) / pdf(1 sd) = 0.008, so 0.03 is ~4 standard errors
    np.testing.assert_allclose(got, stats.norm.ppf([0.16, 0.84], 1.0, 0.5), atol=0.03)


@pytest.mark.parametrize(("text", "value"), [("20%", 0.2), ("0.2", 0.2), (" 5 % ", 0.05), (0.3, 0.3),
                                             ("100%", 1.0)])
def test_parse_precision(text, value):
    assert parse_precision(text) == pytest.approx(value)


@pytest.mark.parametrize(("text", "msg"), [("20", "write 20%"), ("abc", "such as 20%"),
                                           ("0", "between 0 and 100%"), ("150%", "between 0"),
                                           ("-5%", "between 0")])
def test_parse_precision_rejects(text, msg):
    with pytest.raises(InferError, match=msg):
        parse_precision(text, name="--forecast-field")


def test_bad_inputs_raise_with_a_message():
    s = {"field": _normal_samples(1.0), "neg": -np.ones(N)}
    with pytest.raises(InferError, match="no samples of 'density'"):
        forecast(s, "density", 0.2)
    with pytest.raises(InferError, match="positive"):
        forecast(s, "neg", 0.2)
    with pytest.raises(InferError, match="precision"):
        forecast(s, "field", 0.0)
    with pytest.raises(InferError, match="target 'nope'"):
        forecast(s, "field", 0.2, targets=["nope"])


def test_default_targets_skip_constant_and_missing_quantities():
    rng = np.random.default_rng(0)
    s = {"mass_to_flux": np.exp(rng.normal(size=500)), "field": np.exp(rng.normal(size=500)),
         "ionization": np.full(500, np.nan), "eta_ad": np.exp(rng.normal(size=500)),
         "eta_ohm": np.exp(rng.normal(size=500)), "eta_total": np.exp(rng.normal(size=500)),
         "wavelength": np.full(500, 47.0)}
    res = forecast(s, "field", 0.2, n_draws=20)
    assert list(res.targets) == ["mass_to_flux", "eta_ad", "eta_ohm", "eta_total", "field"]

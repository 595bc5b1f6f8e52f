"""Field and column measurements as data: the likelihood term, the config table, the forecast."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from infer.errors import ConfigError
from infer.inference.config import parse_config
from infer.inference.forecast import measurement_weights, weighted_quantiles
from infer.inference.measurements import Measurement, measurement_loglike, parse_measurements
from infer.inference.model import build_model


def test_terms_equal_scipy_normal_densities():
    # Reference: scipy.stats.norm.logpdf of the value (normal) or of its logarithm (log-normal)
    x = np.array([0.3, 1.0, 2.5, 7.0])
    np.testing.assert_allclose(measurement_loglike(x, value=1.2, sd=0.4),
                               stats.norm.logpdf(1.2, x, 0.4), rtol=1e-12)
    np.testing.assert_allclose(measurement_loglike(x, value=1.2, sd_ln=0.3 * np.log(10)),
                               stats.norm.logpdf(np.log(1.2), np.log(x), 0.3 * np.log(10)),
                               rtol=1e-12)
    assert np.all(measurement_loglike(np.array([0.0, -1.0, np.nan]), value=1.0, sd_ln=0.1) == -np.inf)


def test_table_parses_both_error_forms():
    ms = parse_measurements({"field": {"value": "1.2 mG", "error": "400 uG"},
                             "mass_to_flux": {"value": 1.5, "error_dex": 0.3},
                             "surface_density": {"value": "2 kg/m2", "error_dex": 0.2},
                             "temperature": {"value": "35 K", "error": "5 K"}})
    assert ms["field"].value == pytest.approx(1.2) and ms["field"].error == pytest.approx(0.4)
    assert ms["surface_density"].value == pytest.approx(0.2)          # 2 kg/m2 = 0.2 g/cm2
    assert ms["mass_to_flux"].error_dex == 0.3 and ms["mass_to_flux"].error is None
    assert "log-normal" in ms["mass_to_flux"].describe()


@pytest.mark.parametrize("entry,needle", [
    ({"pressure": {"value": "1 dyn/cm2", "error": "1 dyn/cm2"}}, "measurements.pressure"),
    ({"field": {"value": "1 mG"}}, "measurements.field"),
    ({"field": {"value": "1 mG", "error": "0.1 mG", "error_dex": 0.1}}, "measurements.field"),
    ({"field": {"value": "1 K", "error": "0.1 mG"}}, "measurements.field.value"),
    ({"field": {"value": 1.0, "error": "0.1 mG"}}, "measurements.field.value"),
    ({"field": {"value": "1 mG", "error": "-0.1 mG"}}, "measurements.field.error"),
    ({"temperature": {"value": "35 K", "error_dex": "big"}}, "measurements.temperature.error_dex"),
    ({"temperature": "35 K"}, "measurements.temperature"),
    ({"temperature": {"value": "35 K", "error": "5 K", "sd": 1}}, "measurements.temperature.sd"),
])
def test_bad_entries_name_the_key(config_dict, entry, needle):
    with pytest.raises(ConfigError, match=needle.replace(".", r"\.")):
        parse_config(dict(config_dict, measurements=entry))


def test_config_round_trip_and_likelihood_term(config_dict, small_obs):
    # Reference: the added term is scipy's log-normal density of the measured field about the
    # model's field B = 2 pi sqrt(G) Sigma / mu0 (the critical mass-to-flux ratio
    # 1 / (2 pi sqrt(G)), Nakano & Nakamura 1978, PASJ 30, 671)
    meas = {"field": {"value": "30 mG", "error_dex": 0.2},
            "temperature": {"value": "33 K", "error": "3 K"}}
    cfg = parse_config(dict(config_dict, measurements=meas))
    again = parse_config(__import__("tomllib").loads(cfg.to_toml()))
    assert again.measurements == cfg.measurements
    with_m = build_model(cfg, small_obs)
    without = build_model(parse_config(config_dict), small_obs)
    th = with_m.prior_sample(np.random.default_rng(2), 30)
    v = with_m.values(th)
    g = 6.674e-8    # cgs, CODATA 2018 (astropy.constants.G)
    field_mg = 2 * np.pi * np.sqrt(g) * v["surface_density"] / v["mass_to_flux"] * 1e3
    ref = stats.norm.logpdf(np.log(30.0), np.log(field_mg), 0.2 * np.log(10))
    ref += stats.norm.logpdf(33.0, v["temperature"], 3.0)
    a, b = with_m.log_likelihood(th), without.log_likelihood(th)
    ok = np.isfinite(b)
    assert ok.sum() > 5
    np.testing.assert_allclose(a[ok] - b[ok], ref[ok], rtol=2e-4)   # G to 4 digits


def _fit(model, tmp_path, name, seed=3):
    from infer.inference.config import SamplerOptions
    from infer.inference.posterior import posterior_from_chain
    from infer.inference.sampler import run_sampler

    opts = SamplerOptions(walkers=48, max_steps=3000, seed=seed, check_every=500)
    res = run_sampler(model, names=model.names, prior_draws=model.prior_sample, options=opts,
                      chain_path=tmp_path / f"{name}.h5", run_hash=name, progress=False)
    post = posterior_from_chain(model, res.chain, res.tau)
    return {**post.values, **post.derived}, res


@pytest.mark.slow
def test_forecast_of_a_measurement_equals_the_fit_with_it(config_dict, small_obs, tmp_path):
    # The forecast reweights posterior samples by the measurement's likelihood term; the fit
    # adds the same term. The weighted 16/50/84% points of the field and of mu0 must agree
    # with the refit's within sampling noise. Each fit has about 48 walkers x 3000 steps / 40
    # (autocorrelation time) ~ 3000 effective samples, the reweighted set an importance
    # effective size above 1000; a normal quantile at 16% has a standard error of
    # sqrt(0.16 * 0.84) / phi(1) / sqrt(n) = 1.5 sd / sqrt(n), i.e. about 0.03 and 0.05 sd,
    # 0.06 sd combined, so 0.15 sd of the ln-values (2.5 combined standard errors) is the
    # tolerance.
    config_dict["priors"]["ionization"] = {"value": 1e-10}
    base = build_model(parse_config(config_dict), small_obs)
    before, _ = _fit(base, tmp_path, "before")
    field_med = float(np.median(before["field"]))
    meas = {"field": {"value": f"{1.4 * field_med} mG", "error_dex": 0.12}}
    m = Measurement("field", 1.4 * field_med, error_dex=0.12)
    w = measurement_weights(before, m)
    ess = 1.0 / np.sum(w**2)
    after, _ = _fit(build_model(parse_config(dict(config_dict, measurements=meas)), small_obs),
                    tmp_path, "after")
    for name in ("field", "mass_to_flux"):
        x = np.log(before[name])
        got = weighted_quantiles(x, w[None, :], (0.16, 0.5, 0.84))[0]
        ref = np.quantile(np.log(after[name]), (0.16, 0.5, 0.84))
        sd = np.std(np.log(after[name]))
        print(f"\n{name}: forecast {np.exp(got)}, fit {np.exp(ref)}, ess {ess:.0f}")
        np.testing.assert_allclose(got, ref, atol=0.15 * sd)
    # the measurement moved the field: the test is not comparing two unchanged posteriors
    assert np.median(after["field"]) > 1.1 * field_med
    assert ess > 1000

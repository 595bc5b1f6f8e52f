"""The likelihood of docs/physics.md ("Likelihood"), vectorization, and the never-NaN guarantee."""

from __future__ import annotations

import pickle

import numpy as np
from hypothesis_compat import HealthCheck, given, settings, st
from scipy import stats

from infer.inference.config import parse_config
from infer.inference.model import build_model


def _model(config_dict, obs, **model_opts):
    config_dict["model"].update(model_opts)
    return build_model(parse_config(config_dict), obs)


def test_loglike_equals_sum_of_normal_logpdfs(config_dict, small_obs):
    # Reference: ln s_e ~ Normal(ln lambda_m, sigma^2 + (ds/s)^2) etc., evaluated with scipy.stats.norm
    m = _model(config_dict, small_obs)
    rng = np.random.default_rng(3)
    th = m.prior_sample(rng, 20)
    ll = m.log_likelihood(th)
    v = m.values(th)
    d = m.derived(th)
    from infer.constants import AU, M_JUP

    ok = np.isfinite(d["wavelength"])
    assert ok.sum() > 5
    for i in np.flatnonzero(ok):
        s_sd = np.sqrt((v["spacing_scatter"][i] * np.log(10)) ** 2 + small_obs.var_spacing)
        m_sd = np.sqrt((v["mass_scatter"][i] * np.log(10)) ** 2 + small_obs.var_mass)
        ref = stats.norm.logpdf(small_obs.ln_spacing, np.log(d["wavelength"][i] * AU), s_sd).sum()
        ref += stats.norm.logpdf(small_obs.ln_mass, np.log(d["fragment_mass"][i] * M_JUP), m_sd).sum()
        assert np.isclose(ll[i], ref, rtol=1e-10, atol=1e-8)
    assert np.all(ll[~ok] == -np.inf)


def test_vectorized_equals_row_by_row_and_pickles(config_dict, small_obs):
    m = _model(config_dict, small_obs)
    th = m.prior_sample(np.random.default_rng(4), 16)
    whole = m(th)
    rows = np.array([m(t[None, :])[0] for t in th])
    assert np.array_equal(whole, rows)
    again = pickle.loads(pickle.dumps(m))
    assert np.array_equal(again(th), whole)


def test_pointwise_sums_to_the_likelihood(config_dict, small_obs):
    m = _model(config_dict, small_obs)
    th = m.prior_sample(np.random.default_rng(5), 10)
    pw = m.pointwise_loglike(th)
    assert pw.shape == (10, small_obs.n_spacings + small_obs.n_masses)
    assert np.allclose(pw.sum(1)[np.isfinite(pw.sum(1))],
                       m.log_likelihood(th)[np.isfinite(pw.sum(1))])


def test_growth_time_constraint(config_dict, small_obs):
    hard = _model(config_dict, small_obs, growth_time_max="1 yr", growth_constraint="hard")
    th = hard.prior_sample(np.random.default_rng(6), 30)
    assert np.all(hard.log_likelihood(th) == -np.inf)  # nothing grows within a year here
    soft = _model(dict(config_dict), small_obs, growth_time_max="1e9 yr", growth_constraint="soft")
    free = _model(dict(config_dict, model={"diffusion": "ionization"}), small_obs)
    a, b = soft.log_likelihood(th), free.log_likelihood(th)
    fin = np.isfinite(a) & np.isfinite(b)
    assert np.array_equal(np.isfinite(a), np.isfinite(b))
    diff = a[fin] - b[fin]
    # log Phi(z) for z >> 0 is ~0: a very generous limit barely changes the likelihood
    assert fin.sum() > 5 and np.all(np.abs(diff) < 1e-6)


@settings(max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(st.floats(min_value=0.0, max_value=1.0), min_size=6, max_size=6))
def test_log_posterior_never_nan_over_the_prior_box(config_dict, small_obs, q):
    # property: anywhere in (and at the edges of) the prior box the posterior is finite or -inf
    m = _model(config_dict, small_obs)
    th = np.array([[np.log(max(m.priors[n].ppf(np.clip(qi, 1e-12, 1 - 1e-12)), 1e-300))
                    for n, qi in zip(m.names, q, strict=True)]])
    lp = m(th)
    assert not np.isnan(lp).any()
    assert np.all(np.isfinite(lp) | (lp == -np.inf))


def test_garbage_parameter_vectors_give_minus_inf(config_dict, small_obs):
    m = _model(config_dict, small_obs)
    bad = np.array([[np.nan] * m.ndim, [np.inf] * m.ndim, [-np.inf] * m.ndim, [800.0] * m.ndim,
                    [-800.0] * m.ndim])
    out = m(bad)
    assert np.all(out == -np.inf)

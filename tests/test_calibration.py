"""Statistical validation of the whole inference: simulation-based calibration and recovery.

Simulation-based calibration (Talts et al. 2018, arXiv:1804.06788): if parameters are drawn
from the prior and data from the model, the rank of the true value among L posterior draws is
uniform on 0..L. We test uniformity with a chi-square test over J bins; a deliberately broken
likelihood (intrinsic scatter fixed far too small) must fail the same test.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from infer.constants import AU, M_JUP
from infer.inference.config import parse_config
from infer.inference.model import Observations, build_model
from infer.inference.sampler import run_sampler

pytestmark = pytest.mark.slow

N_OBS = 6
L_DRAWS = 99          # posterior draws per replicate -> ranks 0..99
J_BINS = 10


def _config(spacing_scatter=0.1, mass_scatter=0.15):
    return parse_config({
        "model": {"diffusion": "ideal"},
        "priors": {
            "mass_to_flux": {"dist": "loguniform", "low": 1.5, "high": 10},
            "surface_density": {"value": "0.05 g/cm2"},
            "temperature": {"value": "12 K"},
            "kappa": {"value": "0 1/s"},
            "spacing_scatter": {"value": spacing_scatter},
            "mass_scatter": {"value": mass_scatter},
        },
        "sampler": {"walkers": 8, "max_steps": 200, "seed": 1, "check_every": 200},
    })


def _simulate(model, theta, rng, s_dex=0.1, m_dex=0.15):
    d = model.derived(theta[None, :])
    lam, mass = d["wavelength"][0] * AU, d["fragment_mass"][0] * M_JUP
    return Observations.from_arrays(spacings=lam * 10 ** (s_dex * rng.standard_normal(N_OBS)),
                                    masses=mass * 10 ** (m_dex * rng.standard_normal(N_OBS)))


def _ranks(n_rep, fit_config, tmp_path, seed):
    gen_cfg = _config()
    rng = np.random.default_rng(seed)
    ranks = []
    for r in range(n_rep):
        base = build_model(gen_cfg, Observations.from_arrays(spacings=[1.0], masses=[1.0]))
        theta = base.prior_sample(rng, 1)[0]
        obs = _simulate(base, theta, rng)
        m = build_model(fit_config, obs)
        opts = fit_config.with_sampler(seed=int(rng.integers(2**31))).sampler
        res = run_sampler(m, names=m.names, prior_draws=m.prior_sample, options=opts,
                          chain_path=tmp_path / f"c{r}.h5", run_hash="sbc", progress=False)
        # discard 40 steps of burn-in, thin by 4 (most of an autocorrelation time here)
        draws = res.chain.chain[40::4, :, 0].reshape(-1)
        draws = rng.choice(draws, L_DRAWS, replace=False)
        ranks.append(int(np.sum(draws < theta[0])))
    return np.array(ranks)


def _uniformity_pvalue(ranks):
    counts = np.histogram(ranks, bins=J_BINS, range=(0, L_DRAWS + 1))[0]
    return stats.chisquare(counts).pvalue


def test_simulation_based_calibration(tmp_path):
    ranks = _ranks(100, _config(), tmp_path, seed=2024)
    # 100 replicates in 10 bins: a chi-square test at the 1% level (fixed seed)
    assert _uniformity_pvalue(ranks) > 0.01


def test_broken_likelihood_fails_calibration(tmp_path):
    # the fit assumes 0.02 dex scatter while the data have 0.1 / 0.15 dex: posteriors far too
    # narrow, ranks pile up at 0 and L; the same test must reject uniformity
    ranks = _ranks(40, _config(spacing_scatter=0.02, mass_scatter=0.03), tmp_path, seed=7)
    assert _uniformity_pvalue(ranks) < 1e-3


def _recovery_fit(n, tmp_path, seed, *, truth_mu0, free_ionization, mode="ionization"):
    priors = {
        "mass_to_flux": {"dist": "loguniform", "low": 0.3, "high": 10},
        "ionization": ({"dist": "loguniform", "low": 1e-13, "high": 1e-8} if free_ionization
                       else {"value": 1e-10}),
        "surface_density": {"value": "60 g/cm2"},
        "temperature": {"value": "35 K"},
        "stellar_mass": {"value": "0.5 solMass"},
        "radius": {"value": "80 au"},
        "spacing_scatter": {"value": 0.1},
        "mass_scatter": {"value": 0.15},
    }
    if mode == "ideal":
        priors.pop("ionization")
    cfg = parse_config({"model": {"diffusion": mode}, "priors": priors,
                        "sampler": {"walkers": 16, "max_steps": 1200, "seed": seed,
                                    "check_every": 200}})
    truth = np.log([truth_mu0, 1e-10][: 2 if free_ionization else 1])
    base = build_model(cfg, Observations.from_arrays(spacings=[1.0], masses=[1.0]))
    rng = np.random.default_rng(seed)
    d = base.derived(truth[None, :])
    obs = Observations.from_arrays(
        spacings=d["wavelength"][0] * AU * 10 ** (0.1 * rng.standard_normal(n)),
        masses=d["fragment_mass"][0] * M_JUP * 10 ** (0.15 * rng.standard_normal(n)))
    m = build_model(cfg, obs)
    res = run_sampler(m, names=m.names, prior_draws=m.prior_sample, options=cfg.sampler,
                      chain_path=tmp_path / f"rec{n}{free_ionization}.h5", run_hash="rec",
                      progress=False)
    x = res.chain.chain[400:].reshape(-1, len(truth))
    return truth, x, m.derived(x[::10])["wavelength"]


def _width68(x):
    lo, hi = np.quantile(x, [0.16, 0.84])
    return hi - lo


def test_recovery_with_field_and_ionization_free(tmp_path):
    # truth mu0 = 2, x_e = 1e-10 (near the peak of the fastest wavelength, about twice the
    # thermal one); the truth must lie inside the 95% interval of both parameters, and with
    # eight times more clumps the posterior of the fastest wavelength must shrink clearly
    # (~sqrt(8) = 2.8 expected for a location parameter)
    lam_width = {}
    for n in (8, 64):
        truth, x, lam = _recovery_fit(n, tmp_path, 11, truth_mu0=2.0, free_ionization=True)
        for i, name in enumerate(("mass-to-flux", "ionization")):
            lo, hi = np.quantile(x[:, i], [0.025, 0.975])
            assert lo < truth[i] < hi, f"{name} truth outside the 95% interval for N={n}"
        lam_width[n] = _width68(np.log(lam))
    assert lam_width[64] < 0.6 * lam_width[8]


def test_recovery_and_shrinkage_of_the_mass_to_flux_ratio(tmp_path):
    # flux freezing, rotating disk: lambda_m falls monotonically with mu0 (82.7 au at mu0 = 2,
    # 42.6 au at 10), so mu0 is identifiable; truth mu0 = 3. The 68% interval of ln mu0 must
    # shrink by about sqrt(8) from 8 to 64 clumps (we require a factor 1/0.6)
    widths = {}
    for n in (8, 64):
        truth, x, _ = _recovery_fit(n, tmp_path, 5, truth_mu0=3.0, free_ionization=False,
                                    mode="ideal")
        lo, hi = np.quantile(x[:, 0], [0.025, 0.975])
        assert lo < truth[0] < hi, f"mass-to-flux truth outside the 95% interval for N={n}"
        widths[n] = _width68(x[:, 0])
    assert widths[64] < 0.6 * widths[8]

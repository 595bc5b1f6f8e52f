"""Selection effects: beam and detection limit as truncations, the expected number of clumps.

The truncated likelihood follows the standard construction for left-truncated data: the
density of an observed value is the parent density divided by the probability of exceeding
the truncation point (Klein & Moeschberger 2003, "Survival Analysis: Techniques for Censored
and Truncated Data", 2nd ed., Springer, chapter 3, likelihood construction for truncated
data; section number from memory).
"""

from __future__ import annotations

import sys
from pathlib import Path

import astropy.units as u
import numpy as np
import pytest
from scipy import optimize, stats

from infer.catalog.limits import beam_fwhm_along, edge_resolution
from infer.constants import AU, M_JUP
from infer.inference.config import parse_config
from infer.inference.likelihood import observation_terms
from infer.inference.model import Observations, build_model
from infer.inference.selection import poisson_loglike, truncation_correction

sys.path.insert(0, str(Path(__file__).parent))
from legacy_likelihood import legacy_log_likelihood, legacy_log_posterior  # noqa: E402

LN10 = np.log(10.0)


def _model(config_dict, obs, **opts):
    config_dict["model"].update(opts)
    return build_model(parse_config(config_dict), obs)


def _censored_obs(rng, n=7):
    s = 52.5 * AU * 10 ** rng.normal(0, 0.1, n)
    m = 19.5 * M_JUP * 10 ** rng.normal(0, 0.15, n + 1)
    return Observations.from_arrays(
        spacings=s, spacing_errors=0.05 * s, masses=m, mass_errors=0.15 * m,
        spacing_min=np.full(n, 40 * AU), mass_limit=12 * M_JUP, area=(400 * AU) ** 2)


# ------------------------------------------------------------- the beam's geometry
@pytest.mark.parametrize("pa", [0.0, 35.0, 120.0])
def test_beam_extent_is_the_half_maximum_radius_of_the_gaussian(pa):
    # Reference: an elliptical Gaussian beam with FWHM a, b falls to half its peak, along any
    # direction, at the radius found by root finding on the 2-D Gaussian itself (scipy brentq).
    a, b = 0.3, 0.12
    sa, sb = a / np.sqrt(8 * np.log(2)), b / np.sqrt(8 * np.log(2))
    for phi in np.linspace(0, 180, 13):
        d = np.radians(phi - pa)

        def half(r, d=d):
            along_major, along_minor = r * np.cos(d), r * np.sin(d)
            return np.exp(-0.5 * ((along_major / sa) ** 2 + (along_minor / sb) ** 2)) - 0.5

        r_half = optimize.brentq(half, 1e-6, 10.0)      # radius to half maximum
        got = beam_fwhm_along(phi * u.deg, major=a * u.arcsec, minor=b * u.arcsec, pa=pa * u.deg)
        # the FWHM along a direction is the full width, twice the half-maximum radius
        assert got.to_value(u.arcsec) == pytest.approx(2 * r_half, rel=1e-9)


def test_edge_limit_follows_the_deprojection_of_each_edge():
    # Face-on, the disk-plane limit equals the sky FWHM along the edge; for an inclined disk an
    # edge along the minor axis is stretched by 1/cos i on deprojection, and so is its limit
    # (angles at 100 pc: 1 arcsec = 100 au, the definition of the parsec).
    sky_x = np.array([0.0, 10.0, 0.0]) * u.au          # edge 0: east, edge 1: north
    sky_y = np.array([0.0, 0.0, 10.0]) * u.au
    pairs = np.array([[0, 1], [0, 2]])
    beam = dict(major=0.2 * u.arcsec, minor=0.1 * u.arcsec, pa=0 * u.deg, distance=100 * u.pc)
    ext, smin = edge_resolution(sky_x, sky_y, pairs, [10.0, 10.0] * u.au, **beam)
    np.testing.assert_allclose(ext.to_value(u.au), [10.0, 20.0])     # minor east, major north
    np.testing.assert_allclose(smin.to_value(u.au), [10.0, 20.0])
    # disk with its major axis north (PA 0) at i = 60 deg: the east edge is deprojected x2
    _, smin = edge_resolution(sky_x, sky_y, pairs, [20.0, 10.0] * u.au, **beam)
    np.testing.assert_allclose(smin.to_value(u.au), [20.0, 20.0])


# ------------------------------------------------------------------ the terms
def test_truncated_terms_equal_scipy_truncnorm():
    # Reference: scipy.stats.truncnorm, the normal density renormalised above a lower bound
    rng = np.random.default_rng(1)
    ln_obs = rng.normal(0, 1, 9)
    var_obs = rng.uniform(0, 0.05, 9)
    ln_min = ln_obs - rng.uniform(0.01, 2, 9)
    centre = np.exp(rng.normal(0, 0.5, (4, 1)))
    scatter = rng.uniform(0.05, 0.4, 4)
    got = observation_terms(ln_obs, var_obs, centre, scatter, ln_min)
    for i in range(4):
        sd = np.sqrt((scatter[i] * LN10) ** 2 + var_obs)
        mu = np.log(centre[i, 0])
        ref = stats.truncnorm.logpdf(ln_obs, (ln_min - mu) / sd, np.inf, loc=mu, scale=sd)
        np.testing.assert_allclose(got[i], ref, rtol=1e-10, atol=1e-12)
    # a threshold of -inf is no truncation at all
    assert np.all(truncation_correction(0.3, 0.2, -np.inf) == 0.0)


def test_poisson_term_equals_scipy():
    # Reference: scipy.stats.poisson.logpmf
    lam = np.array([0.5, 3.0, 17.2, 80.0])
    np.testing.assert_allclose(poisson_loglike(12, lam), stats.poisson.logpmf(12, lam), rtol=1e-12)
    assert np.all(poisson_loglike(3, np.array([0.0, -1.0, np.nan])) == -np.inf)


# --------------------------------------------------- "off" is the old likelihood
def test_selection_off_reproduces_the_previous_likelihood_bit_for_bit(config_dict):
    # Reference: a frozen copy of the likelihood before this change (tests/legacy_likelihood.py)
    obs = _censored_obs(np.random.default_rng(0))
    rng = np.random.default_rng(11)
    for opts in ({"selection": "off"}, {"selection": "off", "growth_time_max": "300 yr"}):
        m = _model(dict(config_dict, model=dict(config_dict["model"])), obs, **opts)
        th = m.prior_sample(rng, 64)
        th = np.vstack([th, th[:8] + rng.normal(0, 3, (8, m.ndim))])     # include far-out rows
        assert np.array_equal(m.log_likelihood(th), legacy_log_likelihood(m, th))
        assert np.array_equal(m(th), legacy_log_posterior(m, th))
        assert np.isfinite(m(th)).sum() > 20


def test_auto_without_limits_is_the_previous_likelihood(config_dict, small_obs):
    m = _model(config_dict, small_obs)          # selection = "auto" by default
    assert m.options.selection == "auto" and not m.selection_active
    th = m.prior_sample(np.random.default_rng(12), 40)
    assert np.array_equal(m(th), legacy_log_posterior(m, th))


def test_auto_adds_the_truncations_and_the_poisson_count(config_dict):
    # Reference: per-term renormalisation by scipy.stats.norm.sf, Poisson count by
    # scipy.stats.poisson with N_exp = area / lambda^2 * P(m > limit) * P(s > beam)
    obs = _censored_obs(np.random.default_rng(0))
    auto = _model(dict(config_dict, model=dict(config_dict["model"])), obs)
    off = _model(dict(config_dict, model=dict(config_dict["model"])), obs, selection="off")
    th = auto.prior_sample(np.random.default_rng(13), 30)
    d = auto.derived(th)
    v = auto.values(th)
    ok = np.isfinite(d["wavelength"])
    with np.errstate(invalid="ignore"):
        diff = auto.log_likelihood(th) - off.log_likelihood(th)
    # entries observed below a limit are not truncated (the catalog shows they were seen)
    ts, tm = np.exp(obs.ln_spacing) > 40 * AU, np.exp(obs.ln_mass) > 12 * M_JUP
    assert not tm.all() and ts.any()
    for i in np.flatnonzero(ok):
        lam, mf = d["wavelength"][i] * AU, d["fragment_mass"][i] * M_JUP
        sd_s = np.sqrt((v["spacing_scatter"][i] * LN10) ** 2 + obs.var_spacing)
        sd_m = np.sqrt((v["mass_scatter"][i] * LN10) ** 2 + obs.var_mass)
        ref = -np.sum(stats.norm.logsf(np.log(40 * AU), np.log(lam), sd_s)[ts])
        ref -= np.sum(stats.norm.logsf(np.log(12 * M_JUP), np.log(mf), sd_m)[tm])
        p_det = stats.norm.sf(np.log(12 * M_JUP), np.log(mf), np.sqrt((v["mass_scatter"][i] * LN10) ** 2
                                                                      + np.median(obs.var_mass)))
        p_det *= stats.norm.sf(np.log(40 * AU), np.log(lam),
                               np.sqrt((v["spacing_scatter"][i] * LN10) ** 2 + np.median(obs.var_spacing)))
        ref += stats.poisson.logpmf(obs.n_masses, (400 * AU) ** 2 / lam**2 * p_det)
        assert diff[i] == pytest.approx(ref, rel=1e-9, abs=1e-9)
    assert ok.sum() > 5


def test_entries_below_the_limits_are_not_truncated():
    s = np.array([30.0, 50.0, 60.0]) * AU
    m = np.array([5.0, 20.0, 30.0, 40.0]) * M_JUP
    o = Observations.from_arrays(spacings=s, masses=m, spacing_min=np.full(3, 40 * AU),
                                 mass_limit=10 * M_JUP)
    assert o.ln_spacing_min[0] == -np.inf and np.all(np.isfinite(o.ln_spacing_min[1:]))
    assert o.ln_mass_min[0] == -np.inf and np.all(np.isfinite(o.ln_mass_min[1:]))


# ------------------------------------------------------- censored-recovery test
TRUE_MU0 = 2.0
GRID = np.linspace(np.log(1.45), np.log(6.0), 301)
SCATTER_S, SCATTER_M = 0.15, 0.2
N_CANDIDATES = 40
N_REPLICATES = 100


def _fixed_config(selection: str) -> dict:
    return {
        "model": {"diffusion": "ionization", "selection": selection},
        "priors": {
            "mass_to_flux": {"dist": "loguniform", "low": 1.45, "high": 6.0},
            "ionization": {"value": 1e-10},
            "surface_density": {"value": "60 g/cm2"},
            "temperature": {"value": "35 K"},
            "stellar_mass": {"value": "0.5 solMass"},
            "radius": {"value": "120 au"},
            "spacing_scatter": {"value": SCATTER_S},
            "mass_scatter": {"value": SCATTER_M},
        },
        "sampler": {"walkers": 8},
    }


def _synthetic_disk(rng, lam_au: float, m_frag: float):
    """Neighbour pairs of a disk at i = 40 deg seen with a beam comparable to the spacing.

    True spacings and masses are drawn from the model (log-normal about lambda_m and M_frag);
    a pair is kept only if its sky separation exceeds the beam's FWHM along it, a mass only
    above the limit (the median true mass).
    """
    from infer.catalog.geometry import project_to_sky

    n = N_CANDIDATES
    s = lam_au * 10 ** (SCATTER_S * rng.standard_normal(n))
    psi = rng.uniform(0, np.pi, n)
    ends = np.zeros((2 * n, 2))
    ends[1::2, 0], ends[1::2, 1] = s * np.cos(psi), s * np.sin(psi)
    sx, sy = project_to_sky(ends[:, 0] * u.au, ends[:, 1] * u.au, inclination=40 * u.deg,
                            position_angle=30 * u.deg)
    pairs = np.arange(2 * n).reshape(n, 2)
    # beam 1.1 x 0.7 lambda_m (arcsec at 100 pc = au / 100), major axis at PA 70 deg
    _, smin = edge_resolution(sx, sy, pairs, s * u.au, major=1.1 * lam_au / 100 * u.arcsec,
                              minor=0.7 * lam_au / 100 * u.arcsec, pa=70 * u.deg,
                              distance=100 * u.pc)
    smin = smin.to_value(u.au)
    keep_s = s > smin
    m = m_frag * 10 ** (SCATTER_M * rng.standard_normal(n))
    keep_m = m > m_frag
    return Observations.from_arrays(spacings=s[keep_s] * AU, masses=m[keep_m] * M_JUP,
                                    spacing_min=smin[keep_s] * AU, mass_limit=m_frag * M_JUP)


def _interval(model) -> tuple[float, float, float]:
    """16, 50, 84% points of the grid posterior of ln mu0 (flat prior in ln mu0)."""
    lp = model(GRID[:, None])
    w = np.exp(lp - lp.max())
    cdf = np.cumsum(w) / w.sum()
    return tuple(float(np.interp(q, cdf, GRID)) for q in (0.16, 0.5, 0.84))


@pytest.mark.slow
def test_censored_recovery_truncated_covers_and_untruncated_is_biased():
    # A 1-D grid posterior of mu0 (other parameters fixed at the truth) for each of 100
    # replicate catalogs. Coverage of the central 68% interval: nominal 0.68 for a correct
    # likelihood; binomial sd over 100 replicates sqrt(0.68 * 0.32 / 100) = 0.047, so the
    # truncated likelihood must give 0.68 +- 3 sd = [0.54, 0.82]. Ignoring the selection keeps
    # the spacings and masses biased high (the low ones are missing), which pulls mu0 low by
    # several posterior widths: its coverage must stay below 0.2 and its median below truth.
    from infer import predict

    o = predict(surface_density="60 g/cm2", temperature="35 K", stellar_mass="0.5 solMass",
                radius="120 au", mass_to_flux=TRUE_MU0, ionization=1e-10)
    lam, mf = float(o.wavelength.to_value(u.au)), float(o.fragment_mass.to_value(u.M_jup))
    rng = np.random.default_rng(20261204)
    truth = np.log(TRUE_MU0)
    hits = {"auto": 0, "off": 0}
    shift = {"auto": [], "off": []}
    kept = []
    for _ in range(N_REPLICATES):
        obs = _synthetic_disk(rng, lam, mf)
        kept.append((obs.n_spacings, obs.n_masses))
        for sel in ("auto", "off"):
            lo, med, hi = _interval(build_model(parse_config(_fixed_config(sel)), obs))
            hits[sel] += lo <= truth <= hi
            shift[sel].append(med - truth)
    cov = {k: v / N_REPLICATES for k, v in hits.items()}
    print(f"\ncensored recovery over {N_REPLICATES} replicates: coverage of the 68% interval of "
          f"mu0: auto {cov['auto']:.2f}, off {cov['off']:.2f}; median shift of ln mu0: auto "
          f"{np.median(shift['auto']):+.3f}, off {np.median(shift['off']):+.3f}; kept per catalog "
          f"(median) {np.median([k[0] for k in kept]):.0f} of {N_CANDIDATES} spacings, "
          f"{np.median([k[1] for k in kept]):.0f} of {N_CANDIDATES} masses")
    assert 0.54 <= cov["auto"] <= 0.82
    assert cov["off"] < 0.2
    assert np.median(shift["off"]) < 0 and abs(np.median(shift["auto"])) < 0.5 * abs(
        np.median(shift["off"]))

"""Radial disk profiles: power laws about reference_radius, Keplerian rotation at each clump."""

from __future__ import annotations

import copy
from pathlib import Path

import astropy.units as u
import numpy as np
import pytest

from infer import predict
from infer.constants import AU, M_JUP
from infer.errors import ConfigError, InferError
from infer.inference.config import parse_config
from infer.inference.model import Observations, build_model

TRUE = {"surface_density": 60.0, "temperature": 35.0, "stellar_mass": 0.6, "r0": 100.0,
        "p": 1.5, "q": 0.5, "mu0": 2.0, "x_e": 1e-10}
SCATTER_S, SCATTER_M = 0.1, 0.15

PL_CONFIG = {
    "model": {"diffusion": "ionization", "profile": "power-law"},
    "priors": {
        "mass_to_flux": {"dist": "loguniform", "low": 0.3, "high": 10},
        "ionization": {"dist": "loguniform", "low": 1e-14, "high": 1e-6},
        "surface_density": {"dist": "lognormal", "median": "60 g/cm2", "sigma_dex": 0.15},
        "temperature": {"value": "35 K"},
        "stellar_mass": {"value": "0.6 solMass"},
        "reference_radius": {"value": "100 au"},
        "surface_density_index": {"dist": "uniform", "low": 0.0, "high": 3.0},
        "temperature_index": {"value": 0.5},
    },
    "sampler": {"walkers": 32},
}


def _truth_at(r_au, **over):
    t = dict(TRUE, **over)
    ratio = np.asarray(r_au) / t["r0"]
    return predict(surface_density=t["surface_density"] * ratio ** -t["p"] * u.g / u.cm**2,
                   temperature=t["temperature"] * ratio ** -t["q"] * u.K,
                   stellar_mass=t["stellar_mass"] * u.solMass, radius=np.asarray(r_au) * u.au,
                   mass_to_flux=t["mu0"], ionization=t["x_e"])


def _synthetic(rng, n=30):
    """Clumps at radii drawn from a power law (dN/dr ~ 1/r) between 0.5 and 2 r_0.

    Masses scatter about M_frag at each clump's radius, spacings of radius-neighbours about
    lambda_m at their mean radius (the likelihood's own generative model).
    """
    r = np.sort(TRUE["r0"] * np.exp(rng.uniform(np.log(0.5), np.log(2.0), n)))
    r_e = 0.5 * (r[1:] + r[:-1])
    lam = _truth_at(r_e).wavelength.to_value(u.au)
    mf = _truth_at(r).fragment_mass.to_value(u.M_jup)
    s = lam * 10 ** (SCATTER_S * rng.standard_normal(n - 1))
    m = mf * 10 ** (SCATTER_M * rng.standard_normal(n))
    return Observations.from_arrays(spacings=s * AU, masses=m * M_JUP, spacing_radius=r_e * AU,
                                    mass_radius=r * AU)


def _config(**prior_changes):
    c = copy.deepcopy(PL_CONFIG)
    for k, v in prior_changes.items():
        if v is None:
            c["priors"].pop(k, None)
        else:
            c["priors"][k] = v
    return c


# ----------------------------------------------------------------- the mapping
def test_model_at_radii_equals_predict_at_the_local_conditions():
    # Reference: the public predict() with Sigma, T, Keplerian kappa and mu0 given at each radius
    # (an independent path from conditions to the kernel)
    obs = _synthetic(np.random.default_rng(0), n=8)
    m = build_model(parse_config(_config(mass_to_flux_index={"value": -0.3},
                                         ionization_index={"value": 0.7})), obs)
    th = m.prior_sample(np.random.default_rng(1), 5)
    v = m.values(th)
    radii = np.array([50.0, 80.0, 100.0, 150.0, 200.0])
    _, _, fw = m.evaluate(th, radii=radii)
    lam = fw.wavelength.reshape(5, 5) / AU
    for i in range(5):
        ratio = radii / 100.0
        o = predict(surface_density=v["surface_density"][i] * ratio ** -v["surface_density_index"][i]
                    * u.g / u.cm**2, temperature=35.0 * ratio ** -0.5 * u.K,
                    stellar_mass=0.6 * u.solMass, radius=radii * u.au,
                    mass_to_flux=v["mass_to_flux"][i] * ratio ** 0.3,
                    ionization=v["ionization"][i] * ratio ** -0.7)
        np.testing.assert_allclose(lam[i], o.wavelength.to_value(u.au), rtol=1e-9)
    # derived quantities are those at the reference radius
    d = m.derived(th)
    ref = predict(surface_density=v["surface_density"] * u.g / u.cm**2, temperature="35 K",
                  stellar_mass="0.6 solMass", radius="100 au", mass_to_flux=v["mass_to_flux"],
                  ionization=v["ionization"])
    np.testing.assert_allclose(d["wavelength"], ref.wavelength.to_value(u.au), rtol=1e-9)


def test_one_kernel_call_per_posterior_evaluation(monkeypatch):
    from infer.physics import dispersion

    obs = _synthetic(np.random.default_rng(0), n=12)
    m = build_model(parse_config(_config()), obs)
    th = m.prior_sample(np.random.default_rng(2), 16)
    calls = []
    real = dispersion.fastest_mode

    def counting(p):
        calls.append(np.shape(p.inv_mu2))
        return real(p)

    monkeypatch.setattr(dispersion, "fastest_mode", counting)
    whole = m(th)
    assert calls == [(16 * m.plan.radii.size,)]
    rows = np.array([m(t[None, :])[0] for t in th])
    np.testing.assert_array_equal(whole, rows)
    assert np.isfinite(whole).sum() > 3


def test_signed_indices_sample_as_themselves():
    m = build_model(parse_config(_config(mass_to_flux_index={"dist": "normal", "mean": -0.5,
                                                             "sd": 0.2})), _synthetic(
        np.random.default_rng(0), n=6))
    th = m.prior_sample(np.random.default_rng(3), 4000)
    j = m.names.index("mass_to_flux_index")
    # a normal prior in the index itself: mean -0.5, sd 0.2 (negative values allowed)
    assert th[:, j].mean() == pytest.approx(-0.5, abs=0.02)
    assert th[:, j].std() == pytest.approx(0.2, rel=0.05)
    np.testing.assert_array_equal(m.values(th)["mass_to_flux_index"], th[:, j])
    np.testing.assert_allclose(m.sampled(m.values(th)), th)


# --------------------------------------------------------------------- config
@pytest.mark.parametrize("changes,needle", [
    ({"stellar_mass": None}, "priors.stellar_mass"),
    ({"radius": {"value": "100 au"}}, "priors.radius"),
    ({"kappa": {"value": "1e-10 1/s"}, "stellar_mass": None}, "priors.stellar_mass"),
    ({"reference_radius": None}, "priors.reference_radius"),
    ({"reference_radius": {"dist": "uniform", "low": "50 au", "high": "150 au"}},
     "priors.reference_radius"),
    ({"surface_density_index": None}, "priors.surface_density_index"),
    ({"temperature_index": {"dist": "beta"}}, "priors.temperature_index"),
    ({"temperature_index": {"value": "half"}}, "priors.temperature_index"),
])
def test_power_law_config_errors_name_the_key(changes, needle):
    with pytest.raises(ConfigError, match=needle.replace(".", r"\.")):
        parse_config(_config(**changes))


def test_profile_keys_are_refused_with_the_local_profile(config_dict):
    config_dict["priors"]["surface_density_index"] = {"value": 1.0}
    with pytest.raises(ConfigError, match=r"priors\.surface_density_index.*power-law"):
        parse_config(config_dict)


def test_defaults_and_resolved_config_round_trip():
    import tomllib

    cfg = parse_config(_config(mass_to_flux_index={"value": -0.25}))
    assert cfg.priors["ionization_index"].value == 0.0
    assert cfg.priors["mass_to_flux_index"].value == -0.25
    again = parse_config(tomllib.loads(cfg.to_toml()))
    assert again.to_dict() == cfg.to_dict()
    assert "surface_density_index" in cfg.sampled


# ------------------------------------------------------------------ bad input
def test_clump_at_the_centre_is_refused(tmp_path):
    from astropy.table import Table

    from infer.cli import main

    t = Table({"id": ["c0", "c1", "c2", "c3"], "x": [0.0, 60.0, -70.0, 0.0] * u.au,
               "y": [0.0, 10.0, 20.0, 90.0] * u.au, "mass": [30.0, 40.0, 35.0, 50.0] * u.M_jup})
    cat = tmp_path / "c.ecsv"
    t.write(cat, format="ascii.ecsv")
    from infer.catalog.regions import read_catalog

    with pytest.raises(InferError, match=r"'c0'.*centre"):
        build_model(parse_config(_config()), Observations.from_region(read_catalog(cat)[0]))
    import tomli_w

    cfg = tmp_path / "run.toml"
    cfg.write_text(tomli_w.dumps(_config()))
    out = tmp_path / "fit"
    assert main(["fit", str(cat), "--config", str(cfg), "--out", str(out)]) == 2
    assert not out.exists()
    out.mkdir()      # an existing empty folder stays empty
    assert main(["fit", str(cat), "--config", str(cfg), "--out", str(out)]) == 2
    assert list(out.iterdir()) == []


# ------------------------------------------------------------------- recovery
GRID_MU = np.linspace(np.log(1.2), np.log(3.5), 100)     # steps 0.011 in ln mu0, 0.025 in p:
GRID_P = np.linspace(0.9, 2.2, 53)                        # a fifth of the posterior widths


def _grid_intervals(obs):
    """68% intervals of ln mu0 and p from the 2-D grid posterior (other parameters at truth)."""
    c = _config(surface_density={"value": "60 g/cm2"}, ionization={"value": 1e-10},
                mass_to_flux={"dist": "loguniform", "low": 1.2, "high": 3.5},
                surface_density_index={"dist": "uniform", "low": 0.9, "high": 2.2},
                spacing_scatter={"value": SCATTER_S}, mass_scatter={"value": SCATTER_M})
    m = build_model(parse_config(c), obs)
    a, b = np.meshgrid(GRID_MU, GRID_P, indexing="ij")
    lp = m(np.column_stack([a.ravel(), b.ravel()])).reshape(a.shape)
    w = np.exp(lp - lp.max())
    out = []
    for marg, grid in ((w.sum(axis=1), GRID_MU), (w.sum(axis=0), GRID_P)):
        cdf = np.cumsum(marg) / marg.sum()
        out.append([float(np.interp(q, cdf, grid)) for q in (0.16, 0.5, 0.84)])
    return out


@pytest.mark.slow
def test_power_law_recovery_over_replicates():
    # 2-D grid posterior of (mu0, p) with the other parameters at the truth, for 24 synthetic
    # disks of 30 clumps. Nominal coverage of a 68% interval is 0.68; the binomial sd over 24
    # replicates is 0.095, so each parameter must be covered in at least 0.68 - 3 sd = 40% of
    # them, and the median posterior median must sit within 0.1 (p) and 0.1 (ln mu0) of the
    # truth (a few per cent of the prior ranges).
    rng = np.random.default_rng(7)
    hit = np.zeros(2)
    med = []
    truth = (np.log(TRUE["mu0"]), TRUE["p"])
    n_rep = 24
    for _ in range(n_rep):
        iv = _grid_intervals(_synthetic(rng))
        hit += [lo <= t <= hi for (lo, _, hi), t in zip(iv, truth, strict=True)]
        med.append([iv[0][1], iv[1][1]])
    med = np.median(np.array(med), axis=0)
    print(f"\npower-law recovery over {n_rep} replicates: 68% coverage mu0 {hit[0] / n_rep:.2f}, "
          f"p {hit[1] / n_rep:.2f}; median of the medians mu0 {np.exp(med[0]):.3f} (truth "
          f"{TRUE['mu0']}), p {med[1]:.3f} (truth {TRUE['p']})")
    assert np.all(hit / n_rep >= 0.40)
    assert abs(med[0] - truth[0]) < 0.1 and abs(med[1] - truth[1]) < 0.1


@pytest.mark.slow
def test_power_law_fit_recovers_p_and_mu0(tmp_path):
    # One sampled fit (surface density, p, mu0, x_e and both scatters free): the truth lies
    # inside the 95% interval of p and mu0 (a 2-sigma check on one fixed-seed catalog).
    from infer.inference.config import SamplerOptions
    from infer.inference.posterior import posterior_from_chain
    from infer.inference.sampler import run_sampler

    obs = _synthetic(np.random.default_rng(11), n=30)
    m = build_model(parse_config(_config()), obs)
    res = run_sampler(m, names=m.names, prior_draws=m.prior_sample, progress=False,
                      options=SamplerOptions(walkers=32, max_steps=2500, seed=2, check_every=500),
                      chain_path=tmp_path / "c.h5", run_hash="x")
    post = posterior_from_chain(m, res.chain, res.tau)
    lo_p, hi_p = np.quantile(post.values["surface_density_index"], [0.025, 0.975])
    lo_m, hi_m = np.quantile(post.values["mass_to_flux"], [0.025, 0.975])
    print(f"\nfit: p 95% [{lo_p:.2f}, {hi_p:.2f}] (truth {TRUE['p']}), mu0 95% [{lo_m:.2f}, "
          f"{hi_m:.2f}] (truth {TRUE['mu0']}), {res.chain.iteration} steps")
    assert lo_p <= TRUE["p"] <= hi_p and hi_p - lo_p < 1.0
    assert lo_m <= TRUE["mu0"] <= hi_m


def test_demo_rings_is_spread_over_radii():
    from infer.catalog.regions import read_catalog

    demo = Path(__file__).resolve().parent.parent / "catalogs"
    [r] = read_catalog(demo / "demo_rings.ecsv")
    rad = r.radii.to_value(u.au)
    r0 = u.Quantity(r.meta["true_parameters"]["reference_radius"]).to_value(u.au)
    assert rad.min() < 0.7 * r0 and rad.max() > 1.5 * r0
    cfg = parse_config(__import__("tomllib").loads((demo / "demo_rings.toml").read_text()))
    assert cfg.model.profile == "power-law"
    m = build_model(cfg, Observations.from_region(r))
    assert m.plan is not None and m.selection_active


@pytest.mark.slow
def test_power_law_fit_folder_has_the_radial_figure_and_the_report_shows_it(tmp_path):
    import shutil

    from astropy.table import Table

    from infer.cli import main

    demo = Path(__file__).resolve().parent.parent / "catalogs"
    cat = tmp_path / "demo_rings.ecsv"
    shutil.copy(demo / "demo_rings.ecsv", cat)
    out = tmp_path / "fit"
    rc = main(["fit", str(cat), "--config", str(demo / "demo_rings.toml"), "--out", str(out),
               "--max-steps", "200"])
    assert rc == 0
    for f in ("radial.png", "radial.pdf", "corner.png", "predictive.png"):
        assert (out / f).stat().st_size > 1000, f
    t = Table.read(out / "summary.ecsv", format="ascii.ecsv")
    rows = dict(zip(t["name"], t["kind"], strict=True))
    assert rows["surface_density_index"] == "sampled" and rows["temperature_index"] == "sampled"
    assert rows["reference_radius"] == "fixed"
    assert "reference_radius = 100 au" in t.meta["derived_quantities"]
    assert "reference_radius = 100 au" in (out / "summary.md").read_text()
    (out / "radial.png").unlink()           # the report redraws a missing fit figure
    assert main(["report", str(out)]) == 0
    md = (out / "report.md").read_text()
    assert "radial.png" in md and "power law about reference_radius" in md
    assert (out / "radial.png").is_file()

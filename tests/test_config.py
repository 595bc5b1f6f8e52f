"""Run config and priors: every key checked, clear errors, densities against scipy.stats."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from infer.errors import ConfigError
from infer.inference.config import load_config, parse_config
from infer.inference.priors import parse_prior


def test_example_config_parses(config_dict):
    cfg = parse_config(config_dict)
    assert cfg.sampled == ["mass_to_flux", "ionization", "surface_density", "temperature",
                           "spacing_scatter", "mass_scatter"]
    assert cfg.priors["radius"].value == pytest.approx(80.0)
    assert cfg.priors["surface_density"].args["median"] == pytest.approx(60.0)


def test_resolved_config_round_trips(tmp_path, config_dict):
    cfg = parse_config(config_dict)
    p = tmp_path / "resolved.toml"
    p.write_text(cfg.to_toml())
    again = load_config(p)
    assert again.to_dict() == cfg.to_dict()
    assert again.digest() == cfg.digest()


def test_units_are_converted(config_dict):
    config_dict["priors"]["radius"] = {"value": "1.2e15 cm"}
    config_dict["priors"]["temperature"] = {"dist": "normal", "mean": "35 K", "sd": "7 K"}
    cfg = parse_config(config_dict)
    # 1 au = 1.495978707e13 cm (IAU 2012 exact definition, via astropy)
    assert cfg.priors["radius"].value == pytest.approx(1.2e15 / 1.495978707e13)


@pytest.mark.parametrize("mutate, message", [
    (lambda d: d["priors"].update(bogus={"value": 1}), "priors.bogus: unknown parameter"),
    (lambda d: d.update(extra={}), "unknown table"),
    (lambda d: d["model"].update(colour="red"), "model.colour: unknown key"),
    (lambda d: d["sampler"].update(speed=3), "sampler.speed: unknown key"),
    (lambda d: d["model"].update(diffusion="magic"), "model.diffusion: must be one of"),
    (lambda d: d["priors"].update(mass_to_flux={"dist": "loguniform", "low": 10, "high": 1}),
     "no support"),
    (lambda d: d["priors"].update(radius={"value": "80 K"}), "priors.radius.value: unit K"),
    (lambda d: d["priors"].update(radius={"value": 80}), "priors.radius.value"),
    (lambda d: d["priors"].update(temperature={"dist": "normal", "mean": "35 K"}), "missing sd"),
    (lambda d: d["priors"].update(temperature={"dist": "gamma", "k": 1}), "unknown dist"),
    (lambda d: d["priors"].pop("ionization"), "priors.ionization: required"),
    (lambda d: d["priors"].update(eta_ad={"value": "1e18 cm2/s"}), "priors.eta_ad: not used"),
    (lambda d: d["priors"].pop("radius"), "priors.radius: required"),
    (lambda d: d["sampler"].update(walkers=7), "sampler.walkers"),
    (lambda d: d["sampler"].update(walkers=4), "at least twice"),
    (lambda d: d["sampler"].update(coordinates="rotated"), "sampler.coordinates: must be one of"),
    (lambda d: d["priors"].update(ionization={"dist": "uniform", "low": -1, "high": 1e-6}),
     "non-negative"),
])
def test_bad_configs_name_the_key(config_dict, mutate, message):
    mutate(config_dict)
    with pytest.raises(ConfigError, match=message):
        parse_config(config_dict)


def test_free_and_ideal_modes(config_dict):
    d = config_dict
    d["model"]["diffusion"] = "free"
    d["priors"].pop("ionization")
    with pytest.raises(ConfigError, match="priors.eta_ad: required"):
        parse_config(d)
    d["priors"]["eta_ad"] = {"dist": "loguniform", "low": "1e15 cm2/s", "high": "1e21 cm2/s"}
    d["priors"]["eta_ohm"] = {"dist": "loguniform", "low": "1e12 cm2/s", "high": "1e19 cm2/s"}
    assert "eta_ohm" in parse_config(d).sampled
    d["model"]["diffusion"] = "ideal"
    with pytest.raises(ConfigError, match="not used"):
        parse_config(d)


def test_bad_toml_file(tmp_path):
    p = tmp_path / "bad.toml"
    p.write_text("[model\ndiffusion = ")
    with pytest.raises(ConfigError, match="not valid TOML"):
        load_config(p)
    with pytest.raises(ConfigError, match="not found"):
        load_config(tmp_path / "missing.toml")
    p.write_bytes(b"\xff\xfe\x00binary")
    with pytest.raises(ConfigError, match="not a text"):
        load_config(p)


# --- densities: ln-space log-density = log pdf(x) + ln x (Jacobian), up to a constant,
# --- compared with scipy.stats (reference library)
@pytest.mark.parametrize("entry, ref", [
    ({"dist": "uniform", "low": 0.5, "high": 4.0}, stats.uniform(0.5, 3.5)),
    ({"dist": "loguniform", "low": 0.1, "high": 10.0}, stats.loguniform(0.1, 10.0)),
    # a normal prior is restricted to the positive values of the (positive) parameter
    ({"dist": "normal", "mean": 2.0, "sd": 0.4}, stats.truncnorm(-5.0, np.inf, loc=2.0, scale=0.4)),
    ({"dist": "lognormal", "median": 3.0, "sigma_dex": 0.2}, stats.lognorm(0.2 * np.log(10), scale=3.0)),
    ({"dist": "truncnormal", "mean": 1.0, "sd": 1.0, "low": 0.5, "high": 3.0},
     stats.truncnorm(-0.5, 2.0, loc=1.0, scale=1.0)),
])
def test_prior_density_matches_scipy(entry, ref):
    prior = parse_prior("mass_to_flux", entry)
    x = np.linspace(*ref.ppf([0.01, 0.99]), 50)
    ours = prior.logpdf_ln(np.log(x))
    theirs = ref.logpdf(x) + np.log(x)
    diff = ours - theirs
    assert np.ptp(diff) < 1e-10          # equal up to the normalising constant
    assert np.allclose(prior.ppf([0.1, 0.5, 0.9]), ref.ppf([0.1, 0.5, 0.9]), rtol=1e-8)


def test_halfnormal_scatter_prior_matches_scipy():
    prior = parse_prior("spacing_scatter", {"dist": "halfnormal", "scale_dex": 0.2})
    ref = stats.halfnorm(scale=0.2)
    x = np.linspace(0.01, 0.6, 40)
    assert np.ptp(prior.logpdf_ln(np.log(x)) - (ref.logpdf(x) + np.log(x))) < 1e-10
    assert np.allclose(prior.ppf([0.25, 0.75]), ref.ppf([0.25, 0.75]))


def test_outside_support_is_minus_inf():
    prior = parse_prior("mass_to_flux", {"dist": "loguniform", "low": 0.1, "high": 10.0})
    assert np.all(prior.logpdf_ln(np.log([0.05, 20.0])) == -np.inf)
    assert np.all(prior.logpdf_ln(np.array([np.nan, np.inf, -np.inf])) == -np.inf)

"""The quantity registry: astropy-readable units, JSON keys built from them, and its readers.

The JSON keys are the stable names of the README ("Stable names: commands, JSON keys,
files"); the units are checked with astropy.units (reference library).
"""

from __future__ import annotations

import astropy.units as u
import numpy as np
import pytest

from infer import predict
from infer.inference.forecast import forecast
from infer.quantities import PARAMETER_NAMES, QUANTITIES

# README, "Stable names": keys of `infer predict --json` and of `infer check --json`
PREDICT_KEYS = {"unstable", "wavelength_au", "growth_time_yr", "fragment_mass_mjup",
                "mass_to_flux", "toomre_q", "field_mG", "eta_ad_cm2_s", "eta_ohm_cm2_s",
                "thermal_wavelength_au", "thermal_mass_mjup", "toomre_q_critical_magnetic",
                "q_crit_mag"}


@pytest.mark.parametrize("name", list(QUANTITIES))
def test_every_unit_is_read_by_astropy_and_its_plain_text_names_it(name):
    q = QUANTITIES[name]
    unit = q.astropy_unit
    assert isinstance(unit, u.UnitBase)
    if q.unit == "dex":                          # scatters: a dex label, no key suffix
        assert q.key() == name and q.text_label == f"{q.title} [dex]"
    elif q.unit:
        # the plain-text form is the same unit (astropy spells Jupiter and solar masses
        # "M_jup" and "M_sun"; the text writes "M_Jup" as the catalogs do)
        assert u.Unit(q.unit_text.replace("M_Jup", "M_jup")) == unit
        assert q.text_label == f"{q.title} [{q.unit_text}]"
        assert q.key().startswith(f"{name}_")
    else:
        assert q.key() == name and q.text_label == q.title


def test_json_keys_of_the_predict_command_are_the_stable_names():
    data = predict(surface_density="60 g/cm2", temperature="35 K", mass_to_flux=1.6,
                   ionization=1e-10, stellar_mass="0.5 solMass", radius="80 au").to_json_dict()
    assert PREDICT_KEYS <= set(data)
    # each value is the Prediction attribute in the unit its key names (astropy conversion)
    pred = predict(surface_density="60 g/cm2", temperature="35 K", mass_to_flux=1.6,
                   ionization=1e-10, stellar_mass="0.5 solMass", radius="80 au")
    assert data["wavelength_au"] == pytest.approx(pred.wavelength.to_value(u.au), rel=1e-15)
    assert data["field_mG"] == pytest.approx(pred.field.to_value(u.mG), rel=1e-15)
    assert data["eta_ad_cm2_s"] == pytest.approx(pred.eta_ad.to_value(u.cm**2 / u.s), rel=1e-15)
    assert data["fragment_mass_mjup"] == pytest.approx(pred.fragment_mass.to_value(u.M_jup),
                                                       rel=1e-15)


def test_auxiliary_entries_are_not_parameters():
    for name in ("spacing", "clump_mass", "area", "column_density", "cosmic_ray_rate",
                 "band_short", "midplane_density"):
        assert name not in PARAMETER_NAMES
    assert QUANTITIES["spacing"].key("spacing_median") == "spacing_median_au"
    assert QUANTITIES["clump_mass"].key("masses") == "masses_mjup"
    assert QUANTITIES["area"].key() == "area_au2"


def test_forecast_tables_name_targets_from_the_registry():
    rng = np.random.default_rng(0)
    field = np.exp(rng.normal(0.0, 0.5, 400))
    samples = {"field": field, "mass_to_flux": 2.0 / field * np.exp(rng.normal(0, 0.1, 400))}
    res = forecast(samples, "field", 0.2, n_draws=20, seed=1)
    text = res.to_text() + res.to_markdown()
    assert QUANTITIES["field"].text_label in text            # "field strength [mG]"
    assert QUANTITIES["mass_to_flux"].text_label in text
    assert QUANTITIES["mass_to_flux"].title in res.sentence()

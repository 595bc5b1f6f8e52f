"""``infer predict`` on the command line: JSON contract, exit codes, one-line errors."""

from __future__ import annotations

import json

import astropy.units as u
import numpy as np
import pytest

from infer import predict

# the stable JSON keys listed in the README ("Stable names"): at least these are always present
REQUIRED_KEYS = {"unstable", "wavelength_au", "growth_time_yr", "fragment_mass_mjup",
                 "mass_to_flux", "toomre_q", "field_mG", "eta_ad_cm2_s", "eta_ohm_cm2_s",
                 "thermal_wavelength_au", "thermal_mass_mjup"}

DISK = ["--surface-density", "60 g/cm2", "--temperature", "35 K", "--mass-to-flux", "1.6",
        "--ionization", "1e-10", "--stellar-mass", "0.5 solMass", "--radius", "80 au"]


def test_json_has_the_contract_keys_and_matches_the_api(cli):
    code, out, err = cli(["predict", *DISK, "--json"])
    assert code == 0 and err == ""
    data = json.loads(out)
    assert REQUIRED_KEYS <= set(data)
    ref = predict(surface_density=60 * u.g / u.cm**2, temperature=35 * u.K, mass_to_flux=1.6,
                  ionization=1e-10, stellar_mass=0.5 * u.M_sun, radius=80 * u.au)
    assert data["unstable"] is True
    assert data["wavelength_au"] == pytest.approx(ref.wavelength.to_value(u.au), rel=1e-12)
    assert data["growth_time_yr"] == pytest.approx(ref.growth_time.to_value(u.yr), rel=1e-12)
    assert data["fragment_mass_mjup"] == pytest.approx(ref.fragment_mass.to_value(u.M_jup),
                                                       rel=1e-12)
    assert data["field_mG"] == pytest.approx(ref.field.to_value(u.mG), rel=1e-12)
    assert data["mass_to_flux"] == pytest.approx(1.6, rel=1e-14)
    for key in REQUIRED_KEYS - {"unstable"}:
        assert isinstance(data[key], float), key


def test_critical_toomre_q_key_and_its_former_name(cli):
    # toomre_q_critical_magnetic is the flux-frozen critical Q, (1 - mu0^-2) /
    # sqrt((C_eff^2 + v_A^2) / c_s^2) (derived in docs/physics.md, "Flux freezing"); the
    # README promises the former key q_crit_mag for one release, with the same value.
    code, out, _ = cli(["predict", *DISK, "--json"])
    assert code == 0
    data = json.loads(out)
    ref = predict(surface_density=60 * u.g / u.cm**2, temperature=35 * u.K, mass_to_flux=1.6,
                  ionization=1e-10, stellar_mass=0.5 * u.M_sun, radius=80 * u.au)
    expected = ref.toomre_q_critical_magnetic.value
    assert data["toomre_q_critical_magnetic"] == pytest.approx(expected, rel=1e-12)
    assert data["q_crit_mag"] == data["toomre_q_critical_magnetic"]
    # P_ext = 0: C_eff = c_s and v_A^2 / c_s^2 = 2 / mu0^2 (docs/physics.md, "Dimensionless form")
    assert expected == pytest.approx((1 - 1.6**-2) / np.sqrt(1 + 2 / 1.6**2), rel=1e-12)
    # the text output names it too
    code, text, _ = cli(["predict", *DISK])
    assert code == 0 and "critical Q, field support" in text


def test_json_uses_null_where_undefined(cli):
    # Q > 1, no field (Toomre 1964): stable; the mass-to-flux ratio of a field-free sheet
    # is infinite, which JSON cannot hold: null as well.
    code, out, _ = cli(["predict", "--surface-density", "1 g/cm2", "--temperature", "50 K",
                        "--stellar-mass", "1 solMass", "--radius", "20 au", "--json"])
    assert code == 0
    data = json.loads(out)               # strict JSON: no NaN / Infinity tokens
    assert "NaN" not in out and "Infinity" not in out
    assert data["unstable"] is False
    for key in ("wavelength_au", "growth_time_yr", "fragment_mass_mjup", "mass_to_flux"):
        assert data[key] is None, key
    assert data["thermal_wavelength_au"] is not None and data["toomre_q"] > 1


def test_text_output(cli):
    code, out, err = cli(["predict", *DISK])
    assert code == 0 and err == ""
    assert "unstable" in out and "au" in out and "M_Jup" in out
    code, out, _ = cli(["predict", "--surface-density", "50 g/cm2", "--temperature", "20 K",
                        "--mass-to-flux", "0.7"])
    assert code == 0 and "stable" in out


@pytest.mark.parametrize("argv,option", [
    (["--surface-density", "-5 g/cm2", "--temperature", "10 K"], "--surface-density"),
    (["--surface-density", "0 g/cm2", "--temperature", "10 K"], "--surface-density"),
    (["--surface-density", "5 g/cm2", "--temperature", "0 K"], "--temperature"),
    (["--surface-density", "5 g/cm2", "--temperature", "10"], "--temperature"),
    (["--surface-density", "5 K", "--temperature", "10 K"], "--surface-density"),
    (["--surface-density", "nan g/cm2", "--temperature", "10 K"], "--surface-density"),
    (["--surface-density", "lots", "--temperature", "10 K"], "--surface-density"),
    (["--surface-density", "5 g/cm2"], "--temperature"),
    (["--temperature", "10 K"], "--surface-density"),
    (["--surface-density", "5 g/cm2", "--temperature", "10 K", "--field", "1 mG",
      "--mass-to-flux", "2"], "--mass-to-flux"),
    (["--surface-density", "5 g/cm2", "--temperature", "10 K", "--eta-ad", "-1 cm2/s"],
     "--eta-ad"),
    (["--surface-density", "5 g/cm2", "--temperature", "10 K", "--eta-ohm", "1e16 K"],
     "--eta-ohm"),
    (["--surface-density", "5 g/cm2", "--temperature", "10 K", "--ionization", "2"],
     "--ionization"),
    (["--surface-density", "5 g/cm2", "--temperature", "10 K", "--stellar-mass", "1 solMass"],
     "--radius"),
    (["--surface-density", "5 g/cm2", "--temperature", "10 K", "--mu-gas", "-1"], "--mu-gas"),
    (["--surface-density", "5 g/cm2", "--temperature", "10 K", "--no-such-option"],
     "--no-such-option"),
    (["--surface-density", "5 g/cm2", "--temperature", "10 K", "--fragment-shape", "round"],
     "--fragment-shape"),
])
def test_bad_options_exit_2_with_one_line(cli, argv, option):
    code, out, err = cli(["predict", *argv])
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert option in lines[0]
    assert "Traceback" not in err and "internal error" not in err


def test_python_dash_m_exit_code_and_message(cli):
    proc = cli.process(["predict", "--surface-density", "0 g/cm2", "--temperature", "10 K",
                        "--json"], timeout=120)
    assert proc.code == 2
    assert proc.out == ""
    lines = proc.err.strip().splitlines()
    assert len(lines) == 1 and "--surface-density" in lines[0] and "positive" in lines[0]
    assert "Traceback" not in proc.err


def test_json_matches_thermal_reference(cli):
    # worked value of docs/checks.md ("Thin sheet and disk") through the command line:
    # N(H2) = 1e22 cm^-2, 10 K -> lambda_m = 0.0734 pc (computed there from the
    # thin-sheet relation of Larson 1985, MNRAS 214, 379; citation from memory)
    code, out, _ = cli(["predict", "--column-density", "1e22 cm-2", "--temperature", "10 K",
                        "--json"])
    assert code == 0
    data = json.loads(out)
    assert (data["wavelength_au"] * u.au).to_value(u.pc) == pytest.approx(0.0734, abs=5e-5)
    assert data["field_mG"] == 0.0 and data["mass_to_flux"] is None
    assert np.isclose(data["wavelength_au"], data["thermal_wavelength_au"], rtol=1e-7)

"""Resolved conditions and their one mapping onto the kernel's dimensionless inputs.

The expected values are computed here with astropy.constants / astropy.units (reference
library) from the formulas of docs/physics.md ("Inputs", "Equilibrium", "Microphysics",
"Dimensionless form"), each named beside its check; the sampler's conditions are compared
with the public API's for the same physical values.
"""

from __future__ import annotations

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest

from infer.constants import AU, M_SUN
from infer.inference.config import parse_config
from infer.inference.model import build_model
from infer.physics.conditions import derive_conditions, keplerian_kappa, kernel_inputs
from infer.physics.predict import forward
from infer.physics.resolve import resolve_conditions
from infer.physics.sheet import equilibrium

G = const.G
M_H = 1.00784 * u.u          # standard atomic weight (IUPAC), docs/physics.md "Inputs"


def test_keplerian_kappa_matches_astropy():
    # kappa = Omega = (G M / r^3)^1/2 for a Keplerian orbit (Binney & Tremaine 2008,
    # Galactic Dynamics, 2nd ed., sec. 3.2.3), evaluated with astropy units
    mass = np.array([0.3, 0.5, 2.0]) * u.M_sun
    radius = np.array([30.0, 80.0, 250.0]) * u.au
    ref = np.sqrt(G * mass / radius**3).to_value(1 / u.s)
    cgs = keplerian_kappa(mass.to_value(u.g), radius.to_value(u.cm))
    scaled = keplerian_kappa(mass.value, radius.value, mass_unit=M_SUN, length_unit=AU)
    assert cgs == pytest.approx(ref, rel=1e-13)
    assert scaled == pytest.approx(ref, rel=1e-13)


def test_kernel_inputs_are_the_dimensionless_groups():
    # docs/physics.md, "Dimensionless form": L0 = c_s^2 / (2 pi G Sigma), t0 = c_s / (2 pi G
    # Sigma), P~ = 2 P_ext / (pi G Sigma^2), kappa~ = kappa t0, eta~ = (eta_AD + eta_OD) t0 / L0^2
    sigma = np.array([5.0, 60.0, 300.0]) * u.g / u.cm**2
    temp = np.array([12.0, 35.0, 80.0]) * u.K
    p_ext = np.array([0.0, 1e-7, 3e-5]) * u.dyn / u.cm**2
    mu0 = np.array([0.8, 1.6, 7.0])
    kappa = np.array([0.0, 2e-10, 1e-9]) / u.s
    eta = np.array([1e17, 3e19, 0.0]) * u.cm**2 / u.s
    c = resolve_conditions(surface_density=sigma, temperature=temp, external_pressure=p_ext,
                           mass_to_flux=mu0, kappa=kappa, eta_ad=eta, eta_ohm=0.5 * eta)
    cs2 = const.k_B * temp / (2.33 * M_H)
    l0 = (cs2 / (2 * np.pi * G * sigma)).to(u.cm)
    t0 = (np.sqrt(cs2) / (2 * np.pi * G * sigma)).to(u.s)
    p = kernel_inputs(c)
    assert p.inv_mu2 == pytest.approx(1 / mu0**2, rel=1e-14)
    assert p.p_ext == pytest.approx((2 * p_ext / (np.pi * G * sigma**2)).to_value(u.one),
                                    rel=1e-12, abs=0)
    assert p.kappa == pytest.approx((kappa * t0).to_value(u.one), rel=1e-12)
    assert p.eta == pytest.approx((1.5 * eta * t0 / l0**2).to_value(u.one), rel=1e-12)


def test_conditions_carry_their_equilibrium_and_the_field():
    # B = 2 pi G^1/2 Sigma / mu0 (critical ratio of Nakano & Nakamura 1978, PASJ 30, 671) and
    # the equilibrium of docs/physics.md, "Equilibrium", rho_c = (pi G Sigma^2 / 2 + P_ext) / c_s^2
    sigma = np.array([20.0, 90.0]) * u.g / u.cm**2
    temp = np.array([20.0, 50.0]) * u.K
    p_ext = np.array([1e-8, 1e-6]) * u.dyn / u.cm**2
    c = resolve_conditions(surface_density=sigma, temperature=temp, external_pressure=p_ext,
                           mass_to_flux=[1.2, 3.0], ionization=[1e-12, 1e-9])
    g_cgs = G.cgs.value
    b_ref = 2 * np.pi * np.sqrt(g_cgs) * sigma.value / np.array([1.2, 3.0])
    assert c.field == pytest.approx(b_ref, rel=1e-14)
    cs2 = (const.k_B * temp / (2.33 * M_H)).to_value(u.cm**2 / u.s**2)
    rho_ref = (np.pi * g_cgs * sigma.value**2 / 2 + p_ext.value) / cs2
    assert c.eq.rho_c == pytest.approx(rho_ref, rel=1e-12)
    # the carried equilibrium is the one of the stated conditions, not another evaluation's
    again = equilibrium(c.sigma, c.temperature, c.p_ext, mu_gas=c.mu_gas)
    assert np.array_equal(c.eq.rho_c, again.rho_c) and np.array_equal(c.eq.z0, again.z0)
    # v_A^2 = B^2 / (4 pi rho_c) (Alfven 1942, Nature 150, 405)
    assert c.alfven_speed_sq == pytest.approx(b_ref**2 / (4 * np.pi * rho_ref), rel=1e-12)


def test_field_free_and_diffusion_free_defaults():
    # no field: mu0 = inf and 1 / mu0^2 = 0; no diffusivities: both 0, x_e unknown (NaN)
    c = derive_conditions(sigma=50.0, temperature=30.0, p_ext=0.0, kappa=0.0)
    assert np.isinf(c.mu0) and c.inv_mu2 == 0.0 and c.field == 0.0
    assert c.eta_total == 0.0 and np.isnan(c.x_e) and np.isnan(c.tau_ni)
    assert kernel_inputs(c).inv_mu2 == 0.0


def test_sampler_and_api_resolve_the_same_conditions(config_dict, small_obs):
    # The sampler's model and the public API go through the same mapping: for the parameter
    # values of a few prior draws, the API given the same Quantities yields the same
    # conditions, kernel inputs and fastest mode (up to the unit conversions of the two paths,
    # astropy's solMass/au scaling against the package's constants: 1e-13 relative).
    m = build_model(parse_config(config_dict), small_obs)
    th = m.prior_sample(np.random.default_rng(11), 12)
    v = m.values(th)
    c_model = m.conditions(v)
    c_api = resolve_conditions(
        surface_density=v["surface_density"] * u.g / u.cm**2, temperature=v["temperature"] * u.K,
        mass_to_flux=v["mass_to_flux"], ionization=v["ionization"],
        stellar_mass=v["stellar_mass"] * u.M_sun, radius=v["radius"] * u.au,
        external_pressure=v["external_pressure"] * u.dyn / u.cm**2)
    for name in ("sigma", "temperature", "mu0", "field", "kappa", "eta_ad", "eta_ohm", "x_e",
                 "tau_ni"):
        assert getattr(c_model, name) == pytest.approx(getattr(c_api, name), rel=1e-13), name
    p_model, p_api = kernel_inputs(c_model), kernel_inputs(c_api)
    for name in ("inv_mu2", "p_ext", "kappa", "eta"):
        assert getattr(p_model, name) == pytest.approx(getattr(p_api, name), rel=1e-12), name
    f_model, f_api = forward(c_model), forward(c_api)
    ok = f_model.unstable
    assert np.array_equal(ok, f_api.unstable) and ok.sum() > 3
    assert f_model.wavelength[ok] == pytest.approx(f_api.wavelength[ok], rel=1e-9)

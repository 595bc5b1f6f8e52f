"""The thin sheet: equilibrium and the classical instability limits.

Every expected value is computed here from astropy.constants / astropy.units
(reference library) and a published formula named beside the check; none is
taken from the package's own output.
"""

from __future__ import annotations

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest
from scipy.integrate import solve_ivp

from infer import predict
from infer.physics import dispersion
from infer.physics.sheet import CRITICAL_MASS_TO_FLUX, equilibrium

# Mass of a hydrogen atom: standard atomic weight 1.00784 u (IUPAC), the
# convention of docs/physics.md ("Inputs"); astropy has no m_H constant.
M_H = 1.00784 * u.u
G = const.G
K_B = const.k_B


def sound_speed(temperature, mu=2.33):
    """Isothermal sound speed sqrt(k_B T / (mu m_H)) (standard definition)."""
    return np.sqrt(K_B * temperature / (mu * M_H)).to(u.cm / u.s)


def kappa_for_q(q, sigma, temperature):
    """Epicyclic frequency giving Toomre Q = c_s kappa / (pi G Sigma) (Toomre 1964)."""
    return (q * np.pi * G * sigma / sound_speed(temperature)).to(1 / u.s)


# --------------------------------------------------------------------------
# Field-free, non-rotating sheet: lambda_c = c_s^2/(G Sigma), lambda_m = 2 lambda_c,
# gamma_max = pi G Sigma / c_s.  Larson 1985, MNRAS 214, 379 (from memory; the
# relation follows in one line from omega^2 = c_s^2 k^2 - 2 pi G Sigma |k|).
# --------------------------------------------------------------------------

def test_thermal_sheet_worked_value():
    # worked value of docs/checks.md ("Thin sheet and disk"), computed by us: T = 10 K,
    # N(H2) = 1e22 cm^-2, mu_H2 = 2.8, mu_gas = 2.33:
    # lambda_c = 0.0367 pc, lambda_m = 0.0734 pc, e-folding time 0.061 Myr (computed,
    # quoted to 3 and 2 figures: tolerances are half a unit in the last quoted digit).
    out = predict(column_density=1e22 * u.cm**-2, temperature=10 * u.K)
    assert bool(out.unstable)
    assert out.band_short.to_value(u.pc) == pytest.approx(0.0367, abs=0.00005)
    assert out.wavelength.to_value(u.pc) == pytest.approx(0.0734, abs=0.00005)
    assert out.thermal_wavelength.to_value(u.pc) == pytest.approx(0.0734, abs=0.00005)
    assert out.growth_time.to_value(u.Myr) == pytest.approx(0.061, abs=0.0005)
    assert np.isinf(out.band_long)                        # no rotation: no long-wave cut-off


@pytest.mark.parametrize("sigma_cgs,temp_k", [(0.05, 10.0), (3.0, 20.0), (120.0, 60.0)])
def test_thermal_sheet_formulas(sigma_cgs, temp_k):
    # Larson 1985 (from memory): exact thin-sheet results, so tolerance is round-off
    # plus the fastest-mode search (1e-9 relative in k, far below 1e-7).
    sigma = sigma_cgs * u.g / u.cm**2
    temp = temp_k * u.K
    cs = sound_speed(temp)
    out = predict(surface_density=sigma, temperature=temp)
    lam_c = (cs**2 / (G * sigma)).to(u.au)
    assert out.band_short.to_value(u.au) == pytest.approx(lam_c.value, rel=1e-10)
    assert out.wavelength.to_value(u.au) == pytest.approx(2 * lam_c.value, rel=1e-7)
    gamma_max = (np.pi * G * sigma / cs).to(1 / u.yr)
    assert (1 / out.growth_time).to_value(1 / u.yr) == pytest.approx(gamma_max.value, rel=1e-10)
    # fragment mass: mass of one wavelength-square, Sigma lambda_m^2 (docs/physics.md,
    # "Predicted observables")
    m_sq = (sigma * (2 * lam_c) ** 2).to(u.M_jup)
    assert out.fragment_mass.to_value(u.M_jup) == pytest.approx(m_sq.value, rel=1e-6)


# --------------------------------------------------------------------------
# Rotating disk: gamma^2 = -(kappa^2 + c_s^2 k^2 - 2 pi G Sigma k), unstable iff
# Q < 1, band k = (pi G Sigma/c_s^2)(1 +- sqrt(1 - Q^2)), gamma_max =
# (pi G Sigma/c_s) sqrt(1 - Q^2), k_m independent of kappa.  Toomre 1964, ApJ 139, 1217.
# --------------------------------------------------------------------------

SIGMA_T = 50.0 * u.g / u.cm**2
TEMP_T = 30.0 * u.K


@pytest.mark.parametrize("q", [0.0, 0.3, 0.6, 0.9, 0.99])
def test_rotating_disk_fastest_mode_and_band(q):
    cs = sound_speed(TEMP_T)
    kappa = kappa_for_q(q, SIGMA_T, TEMP_T)
    out = predict(surface_density=SIGMA_T, temperature=TEMP_T, kappa=kappa)
    assert out.toomre_q.value == pytest.approx(q, rel=1e-12, abs=1e-15)
    k0 = np.pi * G * SIGMA_T / cs**2
    lam_m = (2 * np.pi / k0).to(u.au)                      # k_m = pi G Sigma / c_s^2
    assert out.wavelength.to_value(u.au) == pytest.approx(lam_m.value, rel=1e-7)
    gmax = (np.pi * G * SIGMA_T / cs * np.sqrt(1 - q**2)).to(1 / u.yr)
    assert (1 / out.growth_time).to_value(1 / u.yr) == pytest.approx(gmax.value, rel=1e-9)
    k_hi = k0 * (1 + np.sqrt(1 - q**2))
    assert out.band_short.to_value(u.au) == pytest.approx((2 * np.pi / k_hi).to_value(u.au),
                                                          rel=1e-10)
    if q > 0:
        k_lo = k0 * (1 - np.sqrt(1 - q**2))
        assert out.band_long.to_value(u.au) == pytest.approx((2 * np.pi / k_lo).to_value(u.au),
                                                             rel=1e-8)


def test_rotating_disk_growth_rate_at_every_wavenumber():
    # gamma^2 = -(kappa^2 + c_s^2 k^2 - 2 pi G Sigma k) at arbitrary k, through the
    # dimensionless kernel with L0 = c_s^2 / (2 pi G Sigma), t0 = c_s / (2 pi G Sigma)
    # built here from astropy (docs/physics.md, "Dimensionless form").  Without field the diffusivity
    # must not matter: the cubic factorizes as (g^2 + D)(g + theta).
    cs = sound_speed(TEMP_T)
    kappa = kappa_for_q(0.7, SIGMA_T, TEMP_T)
    l0 = (cs**2 / (2 * np.pi * G * SIGMA_T)).to(u.cm)
    t0 = (cs / (2 * np.pi * G * SIGMA_T)).to(u.s)
    k = np.geomspace(0.01, 3.0, 200) / l0
    omega2 = (kappa**2 + cs**2 * k**2 - 2 * np.pi * G * SIGMA_T * k).to(u.s**-2)
    expected = np.sqrt(np.maximum(-omega2.value, 0.0))
    for eta in (0.0, 1e-3, 10.0, 1e6):
        p = dispersion.sheet_params(inv_mu2=0.0, kappa=(kappa * t0).to_value(u.one), eta=eta)
        got = dispersion.growth_rate((k * l0).to_value(u.one), p) / t0.value
        # absolute tolerance: round-off of gamma^2 near the band edges, ~1e-15 gamma_max^2
        np.testing.assert_allclose(got, expected, rtol=1e-10, atol=1e-7 * expected.max())


def test_rotating_disk_q_boundary():
    # Toomre 1964: unstable just below Q = 1, stable just above.
    for q, grows in ((0.999, True), (1.001, False)):
        out = predict(surface_density=SIGMA_T, temperature=TEMP_T,
                      kappa=kappa_for_q(q, SIGMA_T, TEMP_T))
        assert bool(out.unstable) is grows


def test_keplerian_epicyclic_frequency():
    # Keplerian disk: kappa = Omega = sqrt(G M / r^3) (Binney & Tremaine 2008, sec. 3.2.3).
    mstar, radius = 0.5 * u.M_sun, 80 * u.au
    out = predict(surface_density=SIGMA_T, temperature=TEMP_T, stellar_mass=mstar, radius=radius)
    omega = np.sqrt(G * mstar / radius**3)
    q = (sound_speed(TEMP_T) * omega / (np.pi * G * SIGMA_T)).to_value(u.one)
    assert out.toomre_q.value == pytest.approx(q, rel=1e-12)


# --------------------------------------------------------------------------
# Magnetic sheet, flux frozen.  Nakano & Nakamura 1978, PASJ 30, 671.
# --------------------------------------------------------------------------

def test_critical_mass_to_flux_constant():
    # 1 / (2 pi sqrt(G)) = 616.05 g cm^-2 G^-1 (docs/checks.md, computed from astropy.constants)
    ref = 1 / (2 * np.pi * np.sqrt(G.cgs.value))
    assert CRITICAL_MASS_TO_FLUX == pytest.approx(ref, rel=1e-14)
    assert CRITICAL_MASS_TO_FLUX == pytest.approx(616.05, abs=0.005)


def test_observers_mass_to_flux_form():
    # lambda = 7.6e-21 N(H2)[cm^-2] / B[uG] for mu_H2 = 2.8 -- Crutcher 2004, Ap&SS 292, 225
    # (coefficient from memory, 2 figures: tolerance 0.7 %).
    out = predict(column_density=3e22 * u.cm**-2, temperature=15 * u.K, field=40 * u.uG)
    assert out.mass_to_flux.value == pytest.approx(7.6e-21 * 3e22 / 40, rel=7e-3)


@pytest.mark.parametrize("mu0", [0.3, 0.9, 1.0])
def test_flux_frozen_sheet_does_not_grow_at_or_below_critical(mu0):
    # Nakano & Nakamura 1978: omega^2 = c_s^2 k^2 - 2 pi G Sigma k (1 - mu0^-2) >= 0 for mu0 <= 1.
    for kappa in (0 / u.s, kappa_for_q(0.3, SIGMA_T, TEMP_T)):
        out = predict(surface_density=SIGMA_T, temperature=TEMP_T, mass_to_flux=mu0, kappa=kappa)
        assert not bool(out.unstable)


def _magnetic_terms(sigma, temp, mu0, kappa, k):
    """D and Lambda of docs/physics.md ("Dispersion relation") from astropy constants (P_ext = 0)."""
    cs = sound_speed(temp)
    b_field = 2 * np.pi * np.sqrt(G.cgs.value) * sigma.to_value(u.g / u.cm**2) / mu0   # G
    rho_c = (np.pi * G * sigma**2 / (2 * cs**2)).to(u.g / u.cm**3)
    va2 = (b_field**2 / (4 * np.pi * rho_c.value)) * u.cm**2 / u.s**2     # B^2 / (4 pi rho), cgs
    d = (kappa**2 + cs**2 * k**2 - 2 * np.pi * G * sigma * k).to(u.s**-2)
    lam = (2 * np.pi * G * sigma * k / mu0**2 + va2 * k**2).to(u.s**-2)
    return d, lam, va2, cs


@pytest.mark.parametrize("mu0", [1.05, 1.6, 4.0, 30.0])
def test_flux_frozen_growth_rate(mu0):
    # Nakano & Nakamura 1978: with eta = 0, gamma^2 = -(D + Lambda) exactly.
    cs = sound_speed(TEMP_T)
    kappa = kappa_for_q(0.2, SIGMA_T, TEMP_T)
    l0 = (cs**2 / (2 * np.pi * G * SIGMA_T)).to(u.cm)
    t0 = (cs / (2 * np.pi * G * SIGMA_T)).to(u.s)
    k = np.geomspace(1e-3, 2.0, 300) / l0
    d, lam, _, _ = _magnetic_terms(SIGMA_T, TEMP_T, mu0, kappa, k)
    expected = np.sqrt(np.maximum(-(d + lam).value, 0.0))
    p = dispersion.sheet_params(inv_mu2=1 / mu0**2, kappa=(kappa * t0).to_value(u.one), eta=0.0)
    got = dispersion.growth_rate((k * l0).to_value(u.one), p) / t0.value
    np.testing.assert_allclose(got, expected, rtol=1e-10, atol=1e-7 * expected.max())


@pytest.mark.parametrize("mu0", [1.2, 2.0, 8.0])
def test_flux_frozen_fastest_mode(mu0):
    # Maximizing gamma^2 = 2 pi G Sigma k (1 - mu0^-2) - (c_s^2 + v_A^2) k^2 (no rotation)
    # gives k_m = pi G Sigma (1 - mu0^-2) / (c_s^2 + v_A^2) and
    # gamma_m = pi G Sigma (1 - mu0^-2) / sqrt(c_s^2 + v_A^2) (derived here).
    _, _, va2, cs = _magnetic_terms(SIGMA_T, TEMP_T, mu0, 0 / u.s, 1 / u.cm)
    out = predict(surface_density=SIGMA_T, temperature=TEMP_T, mass_to_flux=mu0)
    f = 1 - mu0**-2
    k_m = np.pi * G * SIGMA_T * f / (cs**2 + va2)
    g_m = np.pi * G * SIGMA_T * f / np.sqrt(cs**2 + va2)
    assert out.wavelength.to_value(u.au) == pytest.approx((2 * np.pi / k_m).to_value(u.au), rel=1e-7)
    assert (1 / out.growth_time).to_value(1 / u.yr) == pytest.approx(g_m.to_value(1 / u.yr),
                                                                     rel=1e-9)


@pytest.mark.parametrize("mu0", [1.5, 3.0])
def test_magnetic_q_criterion(mu0):
    # Flux frozen: unstable iff Q < Q_crit,mag = (1 - mu0^-2) / sqrt((c_s^2 + v_A^2) / c_s^2)
    # (the discriminant of kappa^2 + (c_s^2 + v_A^2) k^2 - 2 pi G Sigma k (1 - mu0^-2); derived here).
    _, _, va2, cs = _magnetic_terms(SIGMA_T, TEMP_T, mu0, 0 / u.s, 1 / u.cm)
    q_crit = (1 - mu0**-2) / np.sqrt(((cs**2 + va2) / cs**2).to_value(u.one))
    for factor, grows in ((0.999, True), (1.001, False)):
        out = predict(surface_density=SIGMA_T, temperature=TEMP_T, mass_to_flux=mu0,
                      kappa=kappa_for_q(factor * q_crit, SIGMA_T, TEMP_T))
        assert out.toomre_q_critical_magnetic.value == pytest.approx(q_crit, rel=1e-12)
        assert bool(out.unstable) is grows
    # with any diffusion the field cannot stop the growth: the criterion is Q < 1 again
    out = predict(surface_density=SIGMA_T, temperature=TEMP_T, mass_to_flux=mu0,
                  eta_ad=1e15 * u.cm**2 / u.s,
                  kappa=kappa_for_q(1.001 * q_crit, SIGMA_T, TEMP_T))
    assert bool(out.unstable)


# --------------------------------------------------------------------------
# Vertical equilibrium.  Spitzer 1942, ApJ 95, 329 (from memory):
# rho(z) = rho_0 sech^2(z/z_0), rho_0 = pi G Sigma^2 / (2 c_s^2), z_0 = c_s^2 / (pi G Sigma).
# --------------------------------------------------------------------------

def test_midplane_density_without_external_pressure():
    sigma, temp = 80 * u.g / u.cm**2, 40 * u.K
    cs = sound_speed(temp)
    rho0 = (np.pi * G * sigma**2 / (2 * cs**2)).to(u.g / u.cm**3)
    z0 = (cs**2 / (np.pi * G * sigma)).to(u.au)
    out = predict(surface_density=sigma, temperature=temp)
    assert out.midplane_density.to_value(u.g / u.cm**3) == pytest.approx(rho0.value, rel=1e-12)
    # the sheet's half-thickness Sigma / (2 rho_c) equals the sech^2 scale z_0
    assert out.scale_height.to_value(u.au) == pytest.approx(z0.value, rel=1e-12)
    eq = equilibrium(sigma.value, temp.value)
    assert float(eq.ceff2) == pytest.approx(cs.to_value(u.cm / u.s) ** 2, rel=1e-14)


@pytest.mark.parametrize("p_tilde", [0.01, 0.5, 3.0, 40.0])
def test_pressure_bounded_layer_against_hydrostatic_integration(p_tilde):
    # Integrate the isothermal hydrostatic equations with scipy (reference library),
    #   d rho / dz = -rho g / c_s^2,  d g / dz = 4 pi G rho,
    # from the midplane density the package predicts, out to where c_s^2 rho = P_ext.
    # The gravity at the surface is set by the column below it: Sigma = 2 g(surface) / (4 pi G).
    # Dimensionless: x = z sqrt(4 pi G rho_c)/c_s, r = rho/rho_c, y = g/(c_s sqrt(4 pi G rho_c)).
    sigma, temp = 30.0, 25.0                           # g/cm2, K
    gcgs = G.cgs.value
    p_ext = p_tilde * np.pi * gcgs * sigma**2 / 2      # P~ = 2 P_ext / (pi G Sigma^2)
    eq = equilibrium(sigma, temp, p_ext)
    cs2 = (sound_speed(temp * u.K) ** 2).to_value(u.cm**2 / u.s**2)
    rho_c = float(eq.rho_c)
    r_edge = p_ext / (cs2 * rho_c)

    def rhs(_, s):
        return [-s[0] * s[1], s[0]]

    def edge(_, s):
        return s[0] - r_edge

    edge.terminal = True
    sol = solve_ivp(rhs, (0, 100.0), [1.0, 0.0], events=edge, rtol=1e-12, atol=1e-14)
    y_edge = sol.y_events[0][0][1]
    sigma_ode = 2 * y_edge * np.sqrt(cs2) * np.sqrt(4 * np.pi * gcgs * rho_c) / (4 * np.pi * gcgs)
    # ODE tolerance 1e-12 relative; 1e-8 leaves room for the event location
    assert sigma_ode == pytest.approx(sigma, rel=1e-8)
    # and the analytic relation of docs/physics.md, "Equilibrium": rho_c c_s^2 = pi G Sigma^2 / 2 + P_ext
    assert rho_c * cs2 == pytest.approx(np.pi * gcgs * sigma**2 / 2 + p_ext, rel=1e-13)


@pytest.mark.parametrize("p_tilde", [0.0, 0.2, 1.0, 7.0, 100.0])
def test_effective_sound_speed_and_dimensionless_forms(p_tilde):
    # docs/physics.md, "Equilibrium": the in-plane pressure is c_s^2 Sigma - 2 P_ext Z0(Sigma) with
    # Z0 = Sigma / (2 rho_c); C_eff^2 is its derivative at fixed P_ext (central difference
    # here, step 1e-4 relative: truncation ~1e-8).  Sec. 4: Z0/L0 = 2/(1+P~),
    # C_eff^2/c_s^2 = (1+3P~)/(1+P~)^2, L0 = c_s^2/(2 pi G Sigma), t0 = c_s/(2 pi G Sigma).
    sigma, temp = 12.0, 18.0
    gcgs = G.cgs.value
    cs2 = (sound_speed(temp * u.K) ** 2).to_value(u.cm**2 / u.s**2)
    p_ext = p_tilde * np.pi * gcgs * sigma**2 / 2

    def inplane_pressure(s):
        z0 = s / (2 * (np.pi * gcgs * s**2 / 2 + p_ext) / cs2)
        return cs2 * s - 2 * p_ext * z0

    h = 1e-4 * sigma
    dpds = (inplane_pressure(sigma + h) - inplane_pressure(sigma - h)) / (2 * h)
    eq = equilibrium(sigma, temp, p_ext)
    assert float(eq.ceff2) == pytest.approx(dpds, rel=1e-7)
    l0 = cs2 / (2 * np.pi * gcgs * sigma)
    assert float(eq.length) == pytest.approx(l0, rel=1e-13)
    assert float(eq.time) == pytest.approx(np.sqrt(cs2) / (2 * np.pi * gcgs * sigma), rel=1e-13)
    assert float(eq.p_tilde) == pytest.approx(p_tilde, rel=1e-13, abs=1e-300)
    assert float(eq.z0) / l0 == pytest.approx(2 / (1 + p_tilde), rel=1e-13)
    assert float(eq.ceff2) / cs2 == pytest.approx((1 + 3 * p_tilde) / (1 + p_tilde) ** 2, rel=1e-13)
    p = dispersion.sheet_params(inv_mu2=1 / 1.7**2, p_ext=p_tilde)
    assert float(p.z0) == pytest.approx(2 / (1 + p_tilde), rel=1e-14)
    assert float(p.c2) == pytest.approx((1 + 3 * p_tilde) / (1 + p_tilde) ** 2, rel=1e-14)
    # v_A^2 = B^2 / (4 pi rho_c) with B = 2 pi sqrt(G) Sigma / mu0, in units of c_s^2
    b_field = 2 * np.pi * np.sqrt(gcgs) * sigma / 1.7
    va2 = b_field**2 / (4 * np.pi * float(eq.rho_c))
    assert float(p.va2) == pytest.approx(va2 / cs2, rel=1e-12)


def test_thermal_wavelength_with_external_pressure():
    # docs/physics.md, "Predicted observables": lambda_T = 2 C_eff^2 / (G Sigma).  With only thermal pressure
    # and self-gravity (no field, no rotation) the fastest mode of D = C^2 k^2 - k is
    # k = 1/(2 C^2) in units of 1/L0, so the predicted wavelength must equal it.
    sigma, temp = 20 * u.g / u.cm**2, 30 * u.K
    p_ext = 3.0 * np.pi * G * sigma**2 / 2                  # P~ = 3
    cs2 = sound_speed(temp) ** 2
    ceff2 = cs2 * (1 + 3 * 3.0) / (1 + 3.0) ** 2
    out = predict(surface_density=sigma, temperature=temp, external_pressure=p_ext.to(u.dyn / u.cm**2))
    lam_t = (2 * ceff2 / (G * sigma)).to_value(u.au)
    assert out.thermal_wavelength.to_value(u.au) == pytest.approx(lam_t, rel=1e-12)
    assert out.wavelength.to_value(u.au) == pytest.approx(lam_t, rel=1e-7)

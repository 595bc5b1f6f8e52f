"""From ionization to the neutral-ion collision time and the two diffusivities.

Plain cgs float arrays in and out. Values and their status (docs/physics.md,
"Microphysics"):

* n_i = x_i n_n, or cosmic-ray equilibrium rho_i = C sqrt(rho_n) with
  C = 3e-16 g^1/2 cm^-3/2 at zeta = 1e-17 s^-1, scaling as sqrt(zeta) (from memory);
* tau_ni = 1.4 ((m_i + m_n) / m_i) / (n_i <sigma w>_in), <sigma w>_in = 1.69e-9 cm^3 s^-1
  (HCO+ - H2; from memory);
* eta_AD = v_A^2 tau_ni;  eta_OD = 234 (T / K)^1/2 / x_e cm^2 s^-1.
"""

from __future__ import annotations

import numpy as np

from ..constants import CR_ION_COEFF, HELIUM_FACTOR, M_H, M_ION_AMU, MU_GAS, OHM_COEFF, SIGMA_W_IN

__all__ = [
    "neutral_density",
    "cosmic_ray_ionization",
    "collision_time",
    "ambipolar_diffusivity",
    "ohmic_diffusivity",
    "diffusivities",
]


def neutral_density(rho, mu_gas: float = MU_GAS):
    """Neutral number density n_n = rho / (mu m_H), cm^-3."""
    return np.asarray(rho, dtype=float) / (mu_gas * M_H)


def cosmic_ray_ionization(rho, zeta=1e-17, *, mu_gas: float = MU_GAS, ion_amu: float = M_ION_AMU):
    """Ionization fraction x_i = n_i / n_n in cosmic-ray ionization equilibrium.

    rho_i = C sqrt(rho_n) sqrt(zeta / 1e-17 s^-1), so n_i = K sqrt(n_n) with
    K = C sqrt(m_n) / m_i (about 1.2e-5 cm^-3/2).

    Parameters
    ----------
    rho : array_like
        Neutral mass density, g cm^-3.
    zeta : array_like
        Cosmic-ray ionization rate, s^-1.
    """
    rho = np.asarray(rho, dtype=float)
    rho_i = CR_ION_COEFF * np.sqrt(rho) * np.sqrt(np.asarray(zeta, dtype=float) / 1e-17)
    return (rho_i / (ion_amu * M_H)) / neutral_density(rho, mu_gas)


def collision_time(n_ion, *, mu_gas: float = MU_GAS, ion_amu: float = M_ION_AMU):
    """Neutral-ion collision time tau_ni in s for ion density ``n_ion`` (cm^-3)."""
    n_ion = np.asarray(n_ion, dtype=float)
    with np.errstate(divide="ignore"):
        return HELIUM_FACTOR * ((ion_amu + mu_gas) / ion_amu) / (n_ion * SIGMA_W_IN)


def ambipolar_diffusivity(field, rho, tau_ni):
    """eta_AD = v_A^2 tau_ni = B^2 tau_ni / (4 pi rho), cm^2 s^-1."""
    field = np.asarray(field, dtype=float)
    return field**2 / (4.0 * np.pi * np.asarray(rho, dtype=float)) * np.asarray(tau_ni, dtype=float)


def ohmic_diffusivity(temperature, x_e):
    """eta_OD = 234 (T/K)^1/2 / x_e cm^2 s^-1 (electron-neutral collisions)."""
    with np.errstate(divide="ignore"):
        return OHM_COEFF * np.sqrt(np.asarray(temperature, dtype=float)) / np.asarray(x_e, dtype=float)


def diffusivities(*, x_e, field, rho, temperature, mu_gas: float = MU_GAS,
                  ion_amu: float = M_ION_AMU):
    """Both diffusivities from the ionization fraction (x_e = x_i).

    Parameters
    ----------
    x_e : array_like
        Ionization fraction n_i / n_n (= n_e / n_n).
    field : array_like
        Field strength, G.
    rho : array_like
        Midplane neutral density, g cm^-3.
    temperature : array_like
        Gas temperature, K.

    Returns
    -------
    eta_ad, eta_ohm, tau_ni : ndarray
        cm^2 s^-1, cm^2 s^-1, s.
    """
    n_ion = np.asarray(x_e, dtype=float) * neutral_density(rho, mu_gas)
    tau = collision_time(n_ion, mu_gas=mu_gas, ion_amu=ion_amu)
    return ambipolar_diffusivity(field, rho, tau), ohmic_diffusivity(temperature, x_e), tau

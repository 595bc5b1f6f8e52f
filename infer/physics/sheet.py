"""Vertical equilibrium of the isothermal, self-gravitating, pressure-confined sheet.

All functions take and return plain cgs float arrays (broadcasting like numpy);
see :mod:`infer.physics.predict` for the Quantity interface.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..constants import K_B, M_H, MU_GAS, G

__all__ = [
    "Equilibrium",
    "equilibrium",
    "sound_speed_sq",
    "mass_to_flux_ratio",
    "field_from_mass_to_flux",
    "CRITICAL_MASS_TO_FLUX",
]

#: critical mass-to-flux ratio Sigma / B = 1 / (2 pi sqrt(G)), g cm^-2 G^-1
CRITICAL_MASS_TO_FLUX: float = 1.0 / (2.0 * np.pi * np.sqrt(G))


def sound_speed_sq(temperature, mu_gas: float = MU_GAS):
    """Isothermal sound speed squared c_s^2 = k_B T / (mu m_H), cm^2 s^-2."""
    return K_B * np.asarray(temperature, dtype=float) / (mu_gas * M_H)


def mass_to_flux_ratio(sigma, field):
    """mu0 = 2 pi sqrt(G) Sigma / B (inf where B = 0).

    Parameters
    ----------
    sigma : array_like
        Surface density, g cm^-2.
    field : array_like
        Vertical field, G.
    """
    sigma = np.asarray(sigma, dtype=float)
    field = np.asarray(field, dtype=float)
    with np.errstate(divide="ignore"):
        return np.where(field > 0.0, 2.0 * np.pi * np.sqrt(G) * sigma / np.where(field > 0, field, 1.0),
                        np.inf)


def field_from_mass_to_flux(sigma, mu0):
    """B = 2 pi sqrt(G) Sigma / mu0 in G (0 where mu0 is infinite)."""
    sigma = np.asarray(sigma, dtype=float)
    mu0 = np.asarray(mu0, dtype=float)
    return 2.0 * np.pi * np.sqrt(G) * sigma / mu0


@dataclass(frozen=True)
class Equilibrium:
    """Equilibrium of the sheet (cgs arrays of a common shape).

    Attributes
    ----------
    sigma : surface density, g cm^-2
    cs2 : isothermal sound speed squared, cm^2 s^-2
    p_ext : external pressure, dyn cm^-2
    rho_c : midplane density, g cm^-3
    z0 : half-thickness Sigma / (2 rho_c), cm
    ceff2 : effective in-plane sound speed squared, cm^2 s^-2
    length : L0 = c_s^2 / (2 pi G Sigma), cm
    time : t0 = c_s / (2 pi G Sigma), s
    p_tilde : 2 P_ext / (pi G Sigma^2)
    """

    sigma: np.ndarray
    cs2: np.ndarray
    p_ext: np.ndarray
    rho_c: np.ndarray
    z0: np.ndarray
    ceff2: np.ndarray
    length: np.ndarray
    time: np.ndarray
    p_tilde: np.ndarray


def equilibrium(sigma, temperature, p_ext=0.0, *, mu_gas: float = MU_GAS) -> Equilibrium:
    """Hydrostatic equilibrium of the isothermal layer.

    rho_c = (pi G Sigma^2 / 2 + P_ext) / c_s^2,  Z0 = Sigma / (2 rho_c),
    C_eff^2 = c_s^2 pi G Sigma^2 (pi G Sigma^2 + 6 P_ext) / (pi G Sigma^2 + 2 P_ext)^2.

    Parameters
    ----------
    sigma : array_like
        Total surface density of the sheet, g cm^-2 (> 0).
    temperature : array_like
        Gas temperature, K (> 0).
    p_ext : array_like
        External pressure, dyn cm^-2 (>= 0).
    mu_gas : float
        Mean mass per particle in units of m_H.
    """
    arrays = [np.asarray(x, dtype=float) for x in (sigma, temperature, p_ext)]
    if not arrays[0].shape == arrays[1].shape == arrays[2].shape:   # (the sampler: equal)
        arrays = np.broadcast_arrays(*arrays)
    sigma, temperature, p_ext = arrays
    cs2 = sound_speed_sq(temperature, mu_gas)
    self_p = np.pi * G * sigma**2
    rho_c = (0.5 * self_p + p_ext) / cs2
    z0 = sigma / (2.0 * rho_c)
    ceff2 = cs2 * self_p * (self_p + 6.0 * p_ext) / (self_p + 2.0 * p_ext) ** 2
    length = cs2 / (2.0 * np.pi * G * sigma)
    time = np.sqrt(cs2) / (2.0 * np.pi * G * sigma)
    return Equilibrium(
        sigma=sigma, cs2=cs2, p_ext=p_ext, rho_c=rho_c, z0=z0, ceff2=ceff2,
        length=length, time=time, p_tilde=2.0 * p_ext / self_p,
    )

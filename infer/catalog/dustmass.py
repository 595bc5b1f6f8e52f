"""Optically thin dust continuum: flux density <-> gas mass.

M = g F_nu d^2 / (kappa_nu B_nu(T_d))   (Hildebrand 1983, QJRAS 24, 267)

with the full Planck function B_nu (not its Rayleigh-Jeans limit), the dust
opacity kappa_nu per gram of dust, and the gas-to-dust mass ratio g. The
opacity scales as kappa_nu = kappa_0 (nu / nu_0)^beta when a reference
wavelength and an index are given.

Defaults (used when a catalog gives no dust settings; the catalog reader says
so in a warning):

* ``DEFAULT_OPACITY`` = 0.899 cm^2 per gram of dust at ``DEFAULT_OPACITY_WAVELENGTH``
  = 1.3 mm, for grains with thin ice mantles at 1e6 cm^-3 (Ossenkopf & Henning
  1994, A&A 291, 943; value from memory);
* ``DEFAULT_OPACITY_INDEX`` beta = 1.8, used to scale that opacity to another
  observing wavelength (common practice, no single source);
* ``DEFAULT_GAS_TO_DUST`` = 100 (common practice, no single source).

Public functions take and return astropy Quantity; the arithmetic is done on
cgs floats.
"""

from __future__ import annotations

import astropy.constants as const
import astropy.units as u
import numpy as np

__all__ = [
    "DEFAULT_OPACITY",
    "DEFAULT_OPACITY_WAVELENGTH",
    "DEFAULT_OPACITY_INDEX",
    "DEFAULT_GAS_TO_DUST",
    "planck",
    "dust_opacity",
    "dust_mass",
    "dust_flux",
]

#: dust opacity per gram of dust at 1.3 mm (Ossenkopf & Henning 1994; value from memory)
DEFAULT_OPACITY: u.Quantity = 0.899 * u.cm**2 / u.g
#: wavelength at which DEFAULT_OPACITY holds
DEFAULT_OPACITY_WAVELENGTH: u.Quantity = 1.3 * u.mm
#: opacity index beta for scaling the default opacity (common practice)
DEFAULT_OPACITY_INDEX: float = 1.8
#: gas-to-dust mass ratio (common practice)
DEFAULT_GAS_TO_DUST: float = 100.0

_H = const.h.cgs.value
_K = const.k_B.cgs.value
_C = const.c.cgs.value
_BNU_UNIT = u.erg / (u.s * u.cm**2 * u.Hz * u.sr)


def _hz(frequency) -> np.ndarray:
    return np.asarray(u.Quantity(frequency).to_value(u.Hz, equivalencies=u.spectral()), dtype=float)


def _planck_cgs(nu: np.ndarray, temp: np.ndarray) -> np.ndarray:
    """B_nu in erg s^-1 cm^-2 Hz^-1 sr^-1 (expm1 keeps the low-x end accurate)."""
    return 2.0 * _H * nu**3 / _C**2 / np.expm1(_H * nu / (_K * temp))


def planck(frequency: u.Quantity, temperature: u.Quantity) -> u.Quantity:
    """Planck function B_nu(T).

    Parameters
    ----------
    frequency : Quantity [Hz] (or a wavelength, converted with u.spectral())
    temperature : Quantity [K]

    Returns
    -------
    Quantity [erg / (s cm2 Hz sr)]
        2 h nu^3 / c^2 / (exp(h nu / k T) - 1), broadcast over the inputs.
    """
    temp = np.asarray(u.Quantity(temperature).to_value(u.K), dtype=float)
    return _planck_cgs(_hz(frequency), temp) * _BNU_UNIT


def dust_opacity(
    frequency: u.Quantity,
    *,
    opacity: u.Quantity = DEFAULT_OPACITY,
    reference: u.Quantity | None = DEFAULT_OPACITY_WAVELENGTH,
    index: float = DEFAULT_OPACITY_INDEX,
) -> u.Quantity:
    """Dust opacity per gram of dust at ``frequency``.

    Parameters
    ----------
    frequency : Quantity [Hz] (or a wavelength)
        Observing frequency.
    opacity : Quantity [cm2 / g]
        Opacity per gram of dust at ``reference``.
    reference : Quantity [Hz or mm], optional
        Frequency or wavelength where ``opacity`` holds; ``None`` means at
        ``frequency`` itself (no scaling).
    index : float
        Opacity index beta of kappa ~ nu^beta.

    Returns
    -------
    Quantity [cm2 / g]
        opacity * (nu / nu_0)^beta.
    """
    kap = u.Quantity(opacity).to(u.cm**2 / u.g)
    if reference is None:
        return kap * np.ones(np.shape(_hz(frequency)))
    return kap * (_hz(frequency) / _hz(reference)) ** float(index)


def dust_mass(
    flux: u.Quantity,
    *,
    distance: u.Quantity,
    frequency: u.Quantity,
    temperature: u.Quantity,
    opacity: u.Quantity,
    gas_to_dust: float = DEFAULT_GAS_TO_DUST,
    flux_err: u.Quantity | None = None,
    temperature_err: u.Quantity | None = None,
    opacity_err: u.Quantity | None = None,
) -> tuple[u.Quantity, u.Quantity]:
    """Gas mass of optically thin dust emission, and its uncertainty.

    Parameters
    ----------
    flux : Quantity [Jy]
        Integrated continuum flux density F_nu.
    distance : Quantity [pc]
    frequency : Quantity [Hz] (or a wavelength)
        Observing frequency.
    temperature : Quantity [K]
        Dust temperature T_d.
    opacity : Quantity [cm2 / g]
        Dust opacity per gram of dust *at the observing frequency* (see
        :func:`dust_opacity`).
    gas_to_dust : float
        Gas-to-dust mass ratio g.
    flux_err, temperature_err, opacity_err : Quantity, optional
        One-sigma uncertainties of F_nu [Jy], T_d [K] and kappa_nu [cm2 / g].

    Returns
    -------
    mass, mass_err : Quantity [solMass]
        M = g F d^2 / (kappa B_nu(T_d)) and its uncertainty from linear
        propagation in log space: (dM/M)^2 = (dF/F)^2 + (x e^x / (e^x - 1) dT/T)^2
        + (dkappa/kappa)^2 with x = h nu / (k T_d). Zero when no errors are given.
    """
    f = np.asarray(u.Quantity(flux).to_value(u.erg / (u.s * u.cm**2 * u.Hz)), dtype=float)
    d = u.Quantity(distance).to_value(u.cm)
    nu = _hz(frequency)
    temp = np.asarray(u.Quantity(temperature).to_value(u.K), dtype=float)
    kap = np.asarray(u.Quantity(opacity).to_value(u.cm**2 / u.g), dtype=float)
    mass = float(gas_to_dust) * f * d**2 / (kap * _planck_cgs(nu, temp))
    rel2 = np.zeros(np.shape(mass))
    if flux_err is not None:
        rel2 = rel2 + (u.Quantity(flux_err).to_value(u.Jy) / u.Quantity(flux).to_value(u.Jy)) ** 2
    if temperature_err is not None:
        x = _H * nu / (_K * temp)
        slope = x / -np.expm1(-x)          # d ln B_nu / d ln T = x e^x / (e^x - 1)
        rel2 = rel2 + (slope * u.Quantity(temperature_err).to_value(u.K) / temp) ** 2
    if opacity_err is not None:
        rel2 = rel2 + (u.Quantity(opacity_err).to_value(u.cm**2 / u.g) / kap) ** 2
    msun = const.M_sun.cgs.value
    return (mass / msun) * u.solMass, (mass * np.sqrt(rel2) / msun) * u.solMass


def dust_flux(
    mass: u.Quantity,
    *,
    distance: u.Quantity,
    frequency: u.Quantity,
    temperature: u.Quantity,
    opacity: u.Quantity,
    gas_to_dust: float = DEFAULT_GAS_TO_DUST,
) -> u.Quantity:
    """Inverse of :func:`dust_mass`: the flux density of a gas mass, in Jy.

    Parameters are as for :func:`dust_mass`, with ``mass`` a Quantity [solMass].
    """
    m = np.asarray(u.Quantity(mass).to_value(u.g), dtype=float)
    d = u.Quantity(distance).to_value(u.cm)
    nu = _hz(frequency)
    temp = np.asarray(u.Quantity(temperature).to_value(u.K), dtype=float)
    kap = np.asarray(u.Quantity(opacity).to_value(u.cm**2 / u.g), dtype=float)
    f = m * kap * _planck_cgs(nu, temp) / (float(gas_to_dust) * d**2)
    return (f * u.erg / (u.s * u.cm**2 * u.Hz)).to(u.Jy)


"""Resolved local conditions of the sheet, and their one mapping onto the kernel's inputs.

:func:`derive_conditions` is the only place where the physics turns stated conditions
into the complete set the model needs (docs/physics.md, "Inputs", "Equilibrium",
"Microphysics"): the sheet's equilibrium (computed once and carried along), the field
from the mass-to-flux ratio or the reverse, and the diffusivities from the ionization.
:func:`keplerian_kappa` is the epicyclic frequency of a Keplerian orbit, and
:func:`kernel_inputs` forms the dimensionless groups of docs/physics.md, "Dimensionless
form". The public API (:func:`infer.physics.resolve.resolve_conditions`), the sampler's
model, the growth spectrum and the posterior band all go through these three functions.

Everything is plain cgs float arrays that broadcast like numpy, one entry per set of
conditions (e.g. per posterior sample); nothing here validates user input.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..constants import MU_GAS, G
from .dispersion import SheetParams, sheet_params
from .microphysics import cosmic_ray_ionization, diffusivities
from .sheet import Equilibrium, equilibrium, field_from_mass_to_flux, mass_to_flux_ratio

__all__ = ["Conditions", "derive_conditions", "keplerian_kappa", "kernel_inputs",
           "FRAGMENT_SHAPES"]

#: fragment-mass conventions: mass of a wavelength-square, or of a disk of diameter lambda
FRAGMENT_SHAPES = {"square": 1.0, "disk": np.pi / 4.0}


@dataclass(frozen=True)
class Conditions:
    """Resolved local conditions, cgs arrays broadcasting to :attr:`shape`.

    Attributes
    ----------
    sigma : ndarray
        Surface density, g cm^-2.
    temperature : ndarray
        Gas temperature, K.
    p_ext : ndarray
        External pressure, dyn cm^-2.
    mu0 : ndarray
        Mass-to-flux ratio in units of the critical value (inf without field).
    field : ndarray
        Vertical field, G.
    kappa : ndarray
        Epicyclic frequency, s^-1.
    eta_ad, eta_ohm : ndarray
        Ambipolar and Ohmic diffusivities, cm^2 s^-1.
    x_e : ndarray
        Ionization fraction (NaN when the diffusivities were given directly).
    tau_ni : ndarray
        Neutral-ion collision time, s (NaN when the ionization is unknown).
    mu_gas : float
        Mean mass per particle in units of m_H.
    fragment_shape : str
        "square" or "disk" (:data:`FRAGMENT_SHAPES`).
    eq : Equilibrium
        The sheet's vertical equilibrium for (sigma, temperature, p_ext, mu_gas).
    """

    sigma: np.ndarray
    temperature: np.ndarray
    p_ext: np.ndarray
    mu0: np.ndarray
    field: np.ndarray
    kappa: np.ndarray
    eta_ad: np.ndarray
    eta_ohm: np.ndarray
    x_e: np.ndarray
    tau_ni: np.ndarray
    mu_gas: float
    fragment_shape: str
    eq: Equilibrium

    @property
    def shape(self) -> tuple[int, ...]:
        """The broadcast shape of the arrays (ValueError if they do not broadcast)."""
        return np.broadcast_shapes(*(np.shape(a) for a in (
            self.sigma, self.temperature, self.p_ext, self.mu0, self.field, self.kappa,
            self.eta_ad, self.eta_ohm, self.x_e)))

    @property
    def inv_mu2(self) -> np.ndarray:
        """1 / mu0^2 (0 without field, where mu0 is inf)."""
        with np.errstate(divide="ignore", over="ignore"):   # mu0 > 1e154: 1 / inf = 0
            return 1.0 / self.mu0**2

    @property
    def eta_total(self) -> np.ndarray:
        """eta_AD + eta_OD, cm^2 s^-1 (the only combination the kernel sees)."""
        return self.eta_ad + self.eta_ohm

    @property
    def alfven_speed_sq(self) -> np.ndarray:
        """v_A^2 = B^2 / (4 pi rho_c) at the midplane, cm^2 s^-2."""
        return self.field**2 / (4.0 * np.pi * self.eq.rho_c)


def keplerian_kappa(stellar_mass, radius, *, mass_unit: float = 1.0,
                    length_unit: float = 1.0) -> np.ndarray:
    """Epicyclic frequency of a Keplerian orbit, kappa = Omega = (G M / r^3)^1/2, s^-1.

    Binney & Tremaine 2008, Galactic Dynamics, 2nd ed., sec. 3.2.3.

    Parameters
    ----------
    stellar_mass : array_like
        Stellar mass in units of ``mass_unit`` grams.
    radius : array_like
        Orbital radius in units of ``length_unit`` centimetres.
    mass_unit, length_unit : float
        Grams per unit of ``stellar_mass`` and centimetres per unit of ``radius``
        (1 for cgs input; ``M_SUN`` and ``AU`` for the sampler's solar masses and au).

    Returns
    -------
    ndarray
        s^-1, the broadcast shape of the inputs.
    """
    return np.sqrt(G * stellar_mass * mass_unit / (radius * length_unit) ** 3)


def derive_conditions(*, sigma, temperature, p_ext, kappa, mu0=None, field=None,
                      ionization=None, cosmic_ray_rate=None, eta_ad=None, eta_ohm=None,
                      mu_gas: float = MU_GAS, fragment_shape: str = "square") -> Conditions:
    """The complete conditions, with their equilibrium, from stated cgs values.

    Give at most one of ``mu0`` and ``field`` (neither: no field), and either the
    ionization (``ionization`` or ``cosmic_ray_rate``) or the diffusivities (``eta_ad``,
    ``eta_ohm``, each 0 when omitted). No validation: see
    :func:`infer.physics.resolve.resolve_conditions` for user input.

    Parameters
    ----------
    sigma : array_like
        Surface density, g cm^-2, shape (n,) or broadcastable.
    temperature : array_like
        K.
    p_ext : array_like
        External pressure, dyn cm^-2.
    kappa : array_like
        Epicyclic frequency, s^-1 (:func:`keplerian_kappa` for a Keplerian disk).
    mu0 : array_like, optional
        Mass-to-flux ratio in critical units; the field is B = 2 pi G^1/2 Sigma / mu0.
    field : array_like, optional
        Vertical field, G; then mu0 = 2 pi G^1/2 Sigma / B.
    ionization : array_like, optional
        x_e = x_i; derives eta_AD, eta_OD and tau_ni at the midplane density.
    cosmic_ray_rate : array_like, optional
        Cosmic-ray ionization rate, s^-1; x_e from ionization equilibrium.
    eta_ad, eta_ohm : array_like, optional
        Diffusivities, cm^2 s^-1, when the ionization is not given.
    mu_gas : float
        Mean mass per particle in units of m_H.
    fragment_shape : {"square", "disk"}

    Returns
    -------
    Conditions
    """
    f8 = float
    sigma, temperature = np.asarray(sigma, dtype=f8), np.asarray(temperature, dtype=f8)
    eq = equilibrium(sigma, temperature, p_ext, mu_gas=mu_gas)
    if field is not None:
        field = np.asarray(field, dtype=f8)
        mu0 = mass_to_flux_ratio(sigma, field)
    elif mu0 is not None:
        mu0 = np.asarray(mu0, dtype=f8)
        field = field_from_mass_to_flux(sigma, mu0)
    else:
        field, mu0 = np.zeros(()), np.full((), np.inf)
    if cosmic_ray_rate is not None:
        ionization = cosmic_ray_ionization(eq.rho_c, cosmic_ray_rate, mu_gas=mu_gas)
    if ionization is not None:     # the results of numpy arithmetic: float arrays
        x_e = np.asarray(ionization, dtype=f8)
        eta_ad, eta_ohm, tau = diffusivities(x_e=x_e, field=field, rho=eq.rho_c,
                                             temperature=temperature, mu_gas=mu_gas)
    else:
        eta_ad = np.zeros(()) if eta_ad is None else np.asarray(eta_ad, dtype=f8)
        eta_ohm = np.zeros(()) if eta_ohm is None else np.asarray(eta_ohm, dtype=f8)
        x_e = tau = np.full((), np.nan)
    return Conditions(
        sigma=sigma, temperature=temperature, p_ext=np.asarray(p_ext, dtype=f8), mu0=mu0,
        field=field, kappa=np.asarray(kappa, dtype=f8), eta_ad=eta_ad, eta_ohm=eta_ohm,
        x_e=x_e, tau_ni=tau, mu_gas=float(mu_gas), fragment_shape=fragment_shape, eq=eq,
    )


def kernel_inputs(c: Conditions) -> SheetParams:
    """The kernel's dimensionless inputs (docs/physics.md, "Dimensionless form").

    With L0 = c_s^2 / (2 pi G Sigma) and t0 = c_s / (2 pi G Sigma):
    1 / mu0^2, P~ = 2 P_ext / (pi G Sigma^2), kappa~ = kappa t0 and
    eta~ = (eta_AD + eta_OD) t0 / L0^2.

    Parameters
    ----------
    c : Conditions

    Returns
    -------
    SheetParams
        Arrays of the broadcast shape of ``c`` (dimensionless).
    """
    eq = c.eq
    t0 = eq.time
    return sheet_params(inv_mu2=c.inv_mu2, p_ext=eq.p_tilde, kappa=c.kappa * t0,
                        eta=c.eta_total * t0 / eq.length**2)

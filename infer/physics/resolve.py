"""User conditions -> validated :class:`~infer.physics.conditions.Conditions`.

:func:`resolve_conditions` accepts every way the public API lets a user state the local
conditions (surface or column density, field or mass-to-flux ratio, diffusivities or
ionization, epicyclic frequency or a Keplerian orbit) as Quantity or strings, checks them,
converts them to cgs and hands them to :func:`~infer.physics.conditions.derive_conditions`.
"""

from __future__ import annotations

import functools
from typing import Any

import astropy.units as u
import numpy as np

from ..constants import M_H, MU_GAS, MU_H2, G
from ..errors import InferError
from ..units import dimensionless, to_cgs
from .conditions import FRAGMENT_SHAPES, Conditions, derive_conditions, keplerian_kappa

__all__ = ["resolve_conditions", "KERNEL_LIMIT"]


def _positive(arr: np.ndarray, name: str, *, allow_zero: bool = False) -> np.ndarray:
    bad = arr < 0.0 if allow_zero else arr <= 0.0
    if np.any(bad):
        what = "non-negative" if allow_zero else "positive"
        raise InferError(f"{name}: must be {what}; got {float(arr[bad].ravel()[0])!r}")
    return arr


def _one_of(name_a: str, a: Any, name_b: str, b: Any) -> None:
    if a is not None and b is not None:
        raise InferError(f"give either {name_a} or {name_b}, not both")


def _quiet(func):
    """Run ``func`` without floating-point warnings: extreme but finite inputs may overflow
    on the way, and :func:`_check_range` then refuses them with an InferError."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            return func(*args, **kwargs)

    return wrapper


@_quiet
def resolve_conditions(
    *,
    surface_density: Any = None,
    column_density: Any = None,
    temperature: Any = None,
    mass_to_flux: Any = None,
    field: Any = None,
    eta_ad: Any = None,
    eta_ohm: Any = None,
    ionization: Any = None,
    cosmic_ray_rate: Any = None,
    kappa: Any = None,
    stellar_mass: Any = None,
    radius: Any = None,
    external_pressure: Any = 0.0 * u.dyn / u.cm**2,
    mu_gas: float = MU_GAS,
    fragment_shape: str = "square",
) -> Conditions:
    """Validate the conditions and resolve them to cgs arrays.

    Takes the same arguments as :func:`infer.physics.predict`; see there.

    Raises
    ------
    InferError
        (a ValueError) naming the argument and what to pass.
    """
    _check_shapes(surface_density=surface_density, column_density=column_density,
                  temperature=temperature, mass_to_flux=mass_to_flux, field=field, eta_ad=eta_ad,
                  eta_ohm=eta_ohm, ionization=ionization, cosmic_ray_rate=cosmic_ray_rate,
                  kappa=kappa, stellar_mass=stellar_mass, radius=radius,
                  external_pressure=external_pressure)
    if fragment_shape not in FRAGMENT_SHAPES:
        raise InferError(f"fragment_shape: must be one of {sorted(FRAGMENT_SHAPES)}, "
                         f"got {fragment_shape!r}")
    if not (np.isfinite(mu_gas) and mu_gas > 0):
        raise InferError(f"mu_gas: must be a positive number, got {mu_gas!r}")
    _one_of("surface_density", surface_density, "column_density", column_density)
    if surface_density is None and column_density is None:
        raise InferError("surface_density: required (or give column_density), e.g. '80 g/cm2'")
    if surface_density is not None:
        sigma = _positive(to_cgs(surface_density, name="surface_density", unit=u.g / u.cm**2),
                          "surface_density")
    else:
        ncol = _positive(to_cgs(column_density, name="column_density", unit=u.cm**-2),
                         "column_density")
        sigma = MU_H2 * M_H * ncol
    if temperature is None:
        raise InferError("temperature: required, e.g. '40 K'")
    temp = _positive(to_cgs(temperature, name="temperature", unit=u.K), "temperature")
    p_ext = _positive(to_cgs(external_pressure, name="external_pressure", unit=u.dyn / u.cm**2),
                      "external_pressure", allow_zero=True)

    _one_of("field", field, "mass_to_flux", mass_to_flux)
    b_field = mu0 = None
    if field is not None:
        b_field = _positive(to_cgs(field, name="field", unit=u.G), "field", allow_zero=True)
    elif mass_to_flux is not None:
        mu0 = _positive(_ratio(mass_to_flux, "mass_to_flux"), "mass_to_flux")

    if kappa is not None and (stellar_mass is not None or radius is not None):
        raise InferError("give either kappa or stellar_mass with radius, not both")
    if kappa is not None:
        kap = _positive(to_cgs(kappa, name="kappa", unit=1 / u.s), "kappa", allow_zero=True)
    elif stellar_mass is not None or radius is not None:
        if stellar_mass is None or radius is None:
            raise InferError("stellar_mass and radius: give both for a Keplerian disk "
                             "(kappa = sqrt(G M / r^3))")
        mstar = _positive(to_cgs(stellar_mass, name="stellar_mass", unit=u.g), "stellar_mass")
        rad = _positive(to_cgs(radius, name="radius", unit=u.cm), "radius")
        kap = keplerian_kappa(mstar, rad)
    else:
        kap = np.zeros(())

    diffusion: dict[str, np.ndarray] = {}
    if ionization is not None or cosmic_ray_rate is not None:
        for nm, val in (("eta_ad", eta_ad), ("eta_ohm", eta_ohm)):
            if val is not None:
                raise InferError(f"give either ionization (or cosmic_ray_rate) or {nm}, not both")
        _one_of("ionization", ionization, "cosmic_ray_rate", cosmic_ray_rate)
        if ionization is not None:
            x_e = _positive(_ratio(ionization, "ionization"), "ionization")
            if np.any(x_e > 1.0):
                raise InferError(f"ionization: must be at most 1 (a fraction n_e / n_n); "
                                 f"got {float(np.max(x_e))!r}")
            diffusion["ionization"] = x_e
        else:
            diffusion["cosmic_ray_rate"] = _positive(
                to_cgs(cosmic_ray_rate, name="cosmic_ray_rate", unit=1 / u.s), "cosmic_ray_rate")
    else:
        if eta_ad is not None:
            diffusion["eta_ad"] = _positive(to_cgs(eta_ad, name="eta_ad", unit=u.cm**2 / u.s),
                                            "eta_ad", allow_zero=True)
        if eta_ohm is not None:
            diffusion["eta_ohm"] = _positive(to_cgs(eta_ohm, name="eta_ohm", unit=u.cm**2 / u.s),
                                             "eta_ohm", allow_zero=True)
    c = derive_conditions(sigma=sigma, temperature=temp, p_ext=p_ext, kappa=kap, mu0=mu0,
                          field=b_field, mu_gas=mu_gas, fragment_shape=fragment_shape,
                          **diffusion)
    _check_range(c, "surface_density" if surface_density is not None else "column_density",
                 derived_x_e=cosmic_ray_rate is not None)
    try:
        _ = c.shape
    except ValueError:
        raise InferError("the array arguments do not broadcast against each other; "
                         "give scalars or arrays of compatible shapes") from None
    return c


#: largest dimensionless kernel parameter (P~, kappa t0, eta t0 / L0^2, 1 / mu0^2) accepted;
#: physical conditions stay below ~1e10, and up to this bound the kernel's arithmetic
#: neither overflows nor loses the root (tests/test_kernel_extremes.py)
KERNEL_LIMIT = 1e30


def _check_range(c: Conditions, density_name: str, *, derived_x_e: bool) -> None:
    """Refuse finite but extreme conditions that the model cannot evaluate in floating point."""
    eq, kap, e_ad, e_ohm, mu0, x_e = c.eq, c.kappa, c.eta_ad, c.eta_ohm, c.mu0, c.x_e
    thermal_mass = eq.sigma * (2.0 * eq.ceff2 / (G * eq.sigma)) ** 2
    scales = (eq.length, eq.time, eq.rho_c, eq.z0, eq.ceff2, thermal_mass)
    if not all(np.all(np.isfinite(a) & (a > 0.0)) for a in scales):
        raise InferError(f"{density_name}, temperature, external_pressure, mu_gas: the sheet's "
                         f"length, time, density or mass scale is out of the floating-point "
                         f"range; check their values and units")
    limit = KERNEL_LIMIT
    if not np.all(eq.p_tilde <= limit):
        raise InferError(f"external_pressure: more than {limit:.0e} times the sheet's own "
                         f"gravitational pressure pi G Sigma^2 / 2; check its value and unit")
    if not np.all(kap * eq.time <= limit):
        raise InferError(f"kappa (or stellar_mass and radius): the Toomre parameter exceeds "
                         f"{2 * limit:.0e}; check the values and units")
    if derived_x_e and not np.all(x_e <= 1.0):
        raise InferError("cosmic_ray_rate: the derived x_e exceeds 1 (more electrons than "
                         "neutrals); check its value and unit")
    eta = (e_ad + e_ohm) * eq.time / eq.length**2
    if not np.all(np.isfinite(e_ad) & np.isfinite(e_ohm) & (eta <= limit)):
        raise InferError(f"eta_ad, eta_ohm (or ionization, cosmic_ray_rate): the total "
                         f"diffusivity exceeds {limit:.0e} in the sheet's units "
                         f"L0^2 / t0; check the values and units")
    if not np.all(mu0 >= limit**-0.5):
        raise InferError(f"field or mass_to_flux: a mass-to-flux ratio below {limit**-0.5:.0e} "
                         f"of the critical value; check the values and units")


def _check_shapes(**named: Any) -> None:
    """Refuse array arguments that do not broadcast, before any arithmetic on them."""
    shapes = {k: np.shape(v) for k, v in named.items() if v is not None and not isinstance(v, str)}
    try:
        np.broadcast_shapes(*shapes.values())
    except ValueError:
        listed = ", ".join(f"{k} {v}" for k, v in shapes.items() if v != ())
        raise InferError(f"the array arguments do not broadcast against each other ({listed}); "
                         "give scalars or arrays of compatible shapes") from None


def _ratio(value: Any, name: str) -> np.ndarray:
    """A dimensionless number (mu0 may be inf for 'no field')."""
    if isinstance(value, str) and value.strip().lower() in {"inf", "infinity"}:
        return np.asarray(np.inf)
    if isinstance(value, (int, float, np.ndarray)) and np.all(np.isinf(np.asarray(value, float))):
        return np.asarray(value, dtype=float)
    return dimensionless(value, name=name)

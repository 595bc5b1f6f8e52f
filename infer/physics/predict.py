"""Local disk conditions -> fastest-growing wavelength, growth time and fragment mass.

Two layers:

* :func:`forward` works on resolved :class:`~infer.physics.conditions.Conditions` of plain
  cgs float arrays (the sampler's hot path);
* :func:`predict` is the public interface: astropy Quantity (or strings such as
  ``"80 g/cm2"``) in, a :class:`Prediction` of Quantity arrays out. Arguments
  broadcast against each other like numpy arrays.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import Any, NamedTuple

import astropy.units as u
import numpy as np

from ..constants import AU, M_JUP, MU_GAS, YR, G
from ..errors import InferError
from ..quantities import QUANTITIES
from . import dispersion
from .conditions import FRAGMENT_SHAPES, Conditions, kernel_inputs
from .resolve import resolve_conditions

__all__ = ["Forward", "forward", "Observables", "observables", "Prediction", "predict",
           "prediction_from_conditions"]


@dataclass(frozen=True)
class Forward:
    """Forward-model output in cgs (arrays of the broadcast input shape).

    NaN marks quantities that are undefined because nothing grows.
    """

    unstable: np.ndarray
    wavelength: np.ndarray          # cm
    growth_rate: np.ndarray         # s^-1
    growth_time: np.ndarray         # s
    fragment_mass: np.ndarray       # g
    thermal_wavelength: np.ndarray  # cm
    thermal_mass: np.ndarray        # g
    toomre_q: np.ndarray
    toomre_q_critical_magnetic: np.ndarray
    band_short: np.ndarray          # cm, shortest unstable wavelength
    band_long: np.ndarray           # cm, longest unstable wavelength (inf without rotation)
    rho_c: np.ndarray               # g cm^-3
    z0: np.ndarray                  # cm


def forward(c: Conditions) -> Forward:
    """Evaluate the thin-sheet model on resolved conditions (cgs arrays, no validation).

    The sampler's hot path: one call of the dimensionless kernel for every entry of ``c``.

    Parameters
    ----------
    c : Conditions
        From :func:`~infer.physics.conditions.derive_conditions` (or
        :func:`~infer.physics.resolve.resolve_conditions`), arrays of shape (n,) or
        broadcastable.

    Returns
    -------
    Forward
        cgs arrays of the broadcast shape.
    """
    p = kernel_inputs(c)
    mode = dispersion.fastest_mode(p)
    with np.errstate(over="ignore", divide="ignore"):   # extreme scales: see _check_results
        return _dimensional(mode, p, c)


class Observables(NamedTuple):
    """What the likelihood compares with (cgs arrays of the broadcast input shape).

    The part of :class:`Forward` the sampler needs; NaN where nothing grows.
    """

    unstable: np.ndarray
    wavelength: np.ndarray          # cm
    growth_time: np.ndarray         # s
    fragment_mass: np.ndarray       # g


def observables(c: Conditions) -> Observables:
    """The fastest mode's wavelength, growth time and fragment mass (the sampler's hot path).

    The same numbers as those fields of :func:`forward`, without the rest of it.

    Parameters
    ----------
    c : Conditions
        Arrays of shape (n,) or broadcastable.

    Returns
    -------
    Observables
        cgs arrays of the broadcast shape.
    """
    mode = dispersion.fastest_mode(kernel_inputs(c))
    with np.errstate(over="ignore", divide="ignore"):
        return _observables(mode, c)[0]


def _shaped(a, shape: tuple[int, ...]):
    """``a`` itself when it has ``shape``, else a broadcast view (the sampler's case: equal)."""
    return a if np.shape(a) == shape else np.broadcast_to(a, shape)


def _observables(mode: dispersion.FastestMode,
                 c: Conditions) -> tuple[Observables, np.ndarray, np.ndarray]:
    """The observables in cgs, the growth rate (s^-1) and Sigma of the mode's shape."""
    eq, shape = c.eq, mode.k.shape
    sig = _shaped(eq.sigma, shape)
    lam = 2.0 * np.pi * _shaped(eq.length, shape) / mode.k
    rate = mode.growth_rate / _shaped(eq.time, shape)
    mass = FRAGMENT_SHAPES[c.fragment_shape] * sig * lam**2
    return Observables(mode.unstable, lam, 1.0 / rate, mass), rate, sig


def _dimensional(mode: dispersion.FastestMode, p: dispersion.SheetParams,
                 c: Conditions) -> Forward:
    """The fastest mode in cgs units (the second half of :func:`forward`)."""
    eq, kappa = c.eq, c.kappa
    l0 = eq.length
    shape_factor = FRAGMENT_SHAPES[c.fragment_shape]
    obs, rate, sig = _observables(mode, c)
    lam = obs.wavelength
    lam_t = 2.0 * np.broadcast_to(eq.ceff2, mode.k.shape) / (G * sig)
    cs = np.sqrt(eq.cs2)
    q = cs * np.broadcast_to(np.asarray(kappa, dtype=float), mode.k.shape) / (np.pi * G * sig)
    with np.errstate(invalid="ignore", divide="ignore"):
        q_mag = (1.0 - p.inv_mu2) / np.sqrt(p.c2 + p.va2)
        band_short = 2.0 * np.pi * l0 / mode.k_hi
        band_long = np.where(mode.k_lo > 0, 2.0 * np.pi * l0 / mode.k_lo, np.inf)
    band_long = np.where(np.isnan(mode.k_lo), np.nan, band_long)
    return Forward(
        unstable=mode.unstable,
        wavelength=lam,
        growth_rate=rate,
        growth_time=obs.growth_time,
        fragment_mass=obs.fragment_mass,
        thermal_wavelength=lam_t,
        thermal_mass=shape_factor * sig * lam_t**2,
        toomre_q=q,
        toomre_q_critical_magnetic=np.broadcast_to(q_mag, mode.k.shape),
        band_short=band_short,
        band_long=band_long,
        rho_c=np.broadcast_to(eq.rho_c, mode.k.shape),
        z0=np.broadcast_to(eq.z0, mode.k.shape),
    )


#: the JSON object's entries in order: quantities (keyed with their registry unit, e.g.
#: "wavelength_au"), the fragment-mass convention and the former name of the critical Q
_JSON_ORDER = ("wavelength", "growth_time", "fragment_mass", "fragment_mass_convention",
               "mass_to_flux", "toomre_q", "toomre_q_critical_magnetic", "q_crit_mag", "field",
               "eta_ad", "eta_ohm", "ionization", "tau_ni", "thermal_wavelength", "thermal_mass",
               "band_short", "band_long", "midplane_density", "scale_height")


@dataclass(frozen=True)
class Prediction:
    """Predicted observables, Quantity arrays of the broadcast input shape.

    Attributes
    ----------
    unstable : ndarray of bool
        Whether any mode grows.
    wavelength : Quantity [au]
        Fastest-growing wavelength lambda_m; NaN where stable.
    growth_time : Quantity [yr]
        e-folding time 1 / gamma_m of the fastest mode; NaN where stable.
    fragment_mass : Quantity [jupiterMass]
        Sigma lambda_m^2 ("square") or Sigma pi (lambda_m / 2)^2 ("disk").
    thermal_wavelength : Quantity [au]
        2 C_eff^2 / (G Sigma), the field-free, non-rotating fastest wavelength.
    thermal_mass : Quantity [jupiterMass]
        Same convention as ``fragment_mass`` with the thermal wavelength.
    toomre_q : Quantity [dimensionless]
        c_s kappa / (pi G Sigma).
    toomre_q_critical_magnetic : Quantity [dimensionless]
        The critical Toomre Q with the field's support: a flux-frozen sheet grows
        only if Q is below (1 - mu0^-2) / sqrt((C_eff^2 + v_A^2) / c_s^2).
    mass_to_flux : Quantity [dimensionless]
        mu0 in units of the critical value (inf without field).
    field : Quantity [mG]
    eta_ad, eta_ohm : Quantity [cm2 / s]
    ionization : Quantity [dimensionless]
        x_e where it was given or derived, else NaN.
    tau_ni : Quantity [yr]
        Neutral-ion collision time where the ionization is known, else NaN.
    band_short, band_long : Quantity [au]
        Shortest and longest growing wavelength (band_long is inf without rotation).
    midplane_density : Quantity [g / cm3]
    scale_height : Quantity [au]
        Half-thickness Z0 = Sigma / (2 rho_c).
    fragment_shape : str
        The fragment-mass convention used.
    """

    unstable: np.ndarray
    wavelength: u.Quantity
    growth_time: u.Quantity
    fragment_mass: u.Quantity
    thermal_wavelength: u.Quantity
    thermal_mass: u.Quantity
    toomre_q: u.Quantity
    toomre_q_critical_magnetic: u.Quantity
    mass_to_flux: u.Quantity
    field: u.Quantity
    eta_ad: u.Quantity
    eta_ohm: u.Quantity
    ionization: u.Quantity
    tau_ni: u.Quantity
    band_short: u.Quantity
    band_long: u.Quantity
    midplane_density: u.Quantity
    scale_height: u.Quantity
    fragment_shape: str = "square"

    def to_json_dict(self) -> dict[str, Any]:
        """The JSON keys of the command line (scalar predictions only).

        ``q_crit_mag`` repeats ``toomre_q_critical_magnetic`` under its former name for
        one release (0.1.x), so that scripts reading the old key keep working.
        """

        def num(name: str) -> float | None:
            v = float(np.asarray(getattr(self, name).to_value(QUANTITIES[name].astropy_unit)))
            return v if np.isfinite(v) else None

        out: dict[str, Any] = {"unstable": bool(np.asarray(self.unstable))}
        for name in _JSON_ORDER:
            if name == "fragment_mass_convention":
                out[name] = self.fragment_shape
            elif name == "q_crit_mag":                          # former name, one release
                out[name] = num("toomre_q_critical_magnetic")
            else:
                out[QUANTITIES[name].key()] = num(name)
        return out

    def __len__(self) -> int:
        return int(np.size(self.unstable))

    @property
    def names(self) -> list[str]:
        return [f.name for f in fields(self)]


def predict(
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
) -> Prediction:
    """Predict the fastest-growing wavelength, growth time and fragment mass of a thin sheet.

    Every argument may be a Quantity (scalar or array) or a string such as
    ``"80 g/cm2"``; arrays broadcast against each other, so one call evaluates
    many conditions at once.

    Parameters
    ----------
    surface_density : Quantity [g / cm2]
        Total gas surface density Sigma (or give ``column_density``).
    column_density : Quantity [cm-2]
        H2 column density N; Sigma = 2.8 m_H N.
    temperature : Quantity [K]
        Gas temperature (sets c_s with ``mu_gas``).
    mass_to_flux : float or Quantity [dimensionless]
        mu0 in units of the critical 1 / (2 pi sqrt(G)) (or give ``field``).
        Omit both for a field-free sheet.
    field : Quantity [G]
        Vertical field strength B.
    eta_ad, eta_ohm : Quantity [cm2 / s]
        Ambipolar and Ohmic diffusivities (each defaults to 0).
    ionization : float
        Ionization fraction x_e = x_i; derives both diffusivities (excludes
        ``eta_ad``, ``eta_ohm``, ``cosmic_ray_rate``).
    cosmic_ray_rate : Quantity [1 / s]
        Derive x_e from cosmic-ray ionization equilibrium instead.
    kappa : Quantity [1 / s]
        Epicyclic frequency (or give ``stellar_mass`` and ``radius`` for a
        Keplerian disk, kappa = Omega). Omit all for a non-rotating sheet.
    stellar_mass : Quantity [solMass]
    radius : Quantity [au]
    external_pressure : Quantity [dyn / cm2]
        Confining pressure on the sheet's surfaces (default 0).
    mu_gas : float
        Mean mass per particle in units of m_H (default 2.33).
    fragment_shape : {"square", "disk"}
        Fragment-mass convention: Sigma lambda_m^2 or Sigma pi (lambda_m / 2)^2.

    Returns
    -------
    Prediction
        Quantity arrays; stable conditions have ``unstable=False`` and NaN
        wavelength, growth time and fragment mass.

    Raises
    ------
    InferError
        (a ValueError) naming the argument and what to pass.
    """
    c = resolve_conditions(
        surface_density=surface_density, column_density=column_density, temperature=temperature,
        mass_to_flux=mass_to_flux, field=field, eta_ad=eta_ad, eta_ohm=eta_ohm,
        ionization=ionization, cosmic_ray_rate=cosmic_ray_rate, kappa=kappa,
        stellar_mass=stellar_mass, radius=radius, external_pressure=external_pressure,
        mu_gas=mu_gas, fragment_shape=fragment_shape,
    )
    return prediction_from_conditions(c)


def _check_results(out: Forward) -> None:
    """Refuse results that left the floating-point range (finite inputs at extreme scales).

    Where the closed-form band says a mode grows, the fastest mode's wavelength, growth time
    and fragment mass must be finite and positive; a growth rate that underflows to 0 (e.g.
    a strongly subcritical sheet with a vanishing diffusivity) or a mass that overflows is
    not a result the model can report.
    """
    band = np.isfinite(out.band_short)
    grows = np.broadcast_to(out.unstable, band.shape)
    ok = np.array_equal(band, grows)
    for a in (out.wavelength, out.growth_time, out.fragment_mass):
        v = np.broadcast_to(a, band.shape)[grows]
        ok = ok and bool(np.all(np.isfinite(v) & (v > 0.0)))
    if not ok:
        raise InferError("the fastest mode's growth time, wavelength or fragment mass is beyond "
                         "the floating-point range for these conditions (e.g. a diffusivity so "
                         "small that the growth is too slow to express); check the values and "
                         "units of the conditions")


def prediction_from_conditions(c: Conditions) -> Prediction:
    """Evaluate the model on resolved conditions; Quantity results."""
    out = forward(c)
    _check_results(out)
    shape = c.shape
    b_field, mu0, e_ad, e_ohm, x_e, tau = c.field, c.mu0, c.eta_ad, c.eta_ohm, c.x_e, c.tau_ni

    def b(x):
        return np.broadcast_to(np.asarray(x, dtype=float), shape)

    return Prediction(
        unstable=np.broadcast_to(out.unstable, shape),
        wavelength=(b(out.wavelength) / AU) * u.au,
        growth_time=(b(out.growth_time) / YR) * u.yr,
        fragment_mass=(b(out.fragment_mass) / M_JUP) * u.M_jup,
        thermal_wavelength=(b(out.thermal_wavelength) / AU) * u.au,
        thermal_mass=(b(out.thermal_mass) / M_JUP) * u.M_jup,
        toomre_q=b(out.toomre_q) * u.dimensionless_unscaled,
        toomre_q_critical_magnetic=b(out.toomre_q_critical_magnetic) * u.dimensionless_unscaled,
        mass_to_flux=b(mu0) * u.dimensionless_unscaled,
        field=(b(b_field) * 1e3) * u.mG,
        eta_ad=b(e_ad) * u.cm**2 / u.s,
        eta_ohm=b(e_ohm) * u.cm**2 / u.s,
        ionization=b(x_e) * u.dimensionless_unscaled,
        tau_ni=(b(tau) / YR) * u.yr,
        band_short=(b(out.band_short) / AU) * u.au,
        band_long=(b(out.band_long) / AU) * u.au,
        midplane_density=b(out.rho_c) * u.g / u.cm**3,
        scale_height=(b(out.z0) / AU) * u.au,
        fragment_shape=c.fragment_shape,
    )



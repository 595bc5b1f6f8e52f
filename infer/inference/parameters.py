"""The sampled coordinates of the parameters, and the parameters of each radius of a disk.

Positive parameters are sampled as their natural logarithm (the priors of
:mod:`infer.inference.priors`). The radial power-law indices of ``profile = "power-law"``
may be negative or zero, so they are sampled as themselves, with the priors of
:class:`SignedPrior` (a fixed value, ``uniform`` or ``normal`` on the real line).

With ``profile = "power-law"`` the conditions at a radius r follow from those at
``reference_radius`` r_0 (:func:`infer.physics.profile.power_law`):
surface density, temperature, mass-to-flux ratio and ionization fraction scale as
(r / r_0)^-index with their own index, the epicyclic frequency is Keplerian from
``stellar_mass`` at r. :func:`at_radii` builds the parameter values of every
(sample, radius) pair as flat arrays, so that one kernel call serves a whole ensemble
at all radii.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from ..errors import ConfigError
from ..physics.profile import power_law
from .distributions import SIGNED, Distribution, HeldPrior

__all__ = ["LINEAR", "INDEX_OF", "SignedPrior", "parse_signed_prior", "to_values", "to_sampled",
           "log_prior_sampled", "RadialPlan", "radial_plan", "at_radii"]

#: parameters sampled as themselves (they may be negative); the others are sampled in ln
LINEAR: frozenset[str] = frozenset({"surface_density_index", "temperature_index",
                                    "mass_to_flux_index", "ionization_index"})

#: profile-scaled parameter -> the config key of its power-law index
INDEX_OF: dict[str, str] = {
    "surface_density": "surface_density_index",
    "temperature": "temperature_index",
    "mass_to_flux": "mass_to_flux_index",
    "ionization": "ionization_index",
}

#: distributions of a power-law index (on the real line) -> their keys
_DISTS = {k: cls.keys for k, cls in SIGNED.items() if k != "fixed"}


@dataclass(frozen=True)
class SignedPrior(HeldPrior):
    """A fixed value, or a uniform or normal prior on the real line (for power-law indices).

    Attributes
    ----------
    name : str
    dist : {"fixed", "uniform", "normal"}
    args : dict of float
    distribution : Distribution
        The distribution object (:data:`~infer.inference.distributions.SIGNED`).
    """

    TABLE: ClassVar[dict[str, type[Distribution]]] = SIGNED

    def logpdf_sampled(self, x) -> np.ndarray:
        """log density of x (the sampled coordinate itself; constants dropped), -inf outside
        the support and for non-finite x."""
        x = np.asarray(x, dtype=float)
        return np.where(np.isfinite(x), self.distribution.logpdf_unnorm(x), -np.inf)

    def describe(self) -> str:
        return self.distribution.describe()

    def to_config(self) -> dict[str, Any]:
        if self.fixed:
            return {"value": float(self.args["value"])}
        return {"dist": self.dist, **{k: float(v) for k, v in self.args.items()}}


def _real(where: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ConfigError(f"{where}: expected a plain number, got {value!r}")
    try:
        v = float(value)
    except OverflowError:
        v = np.inf
    if not np.isfinite(v):
        raise ConfigError(f"{where}: must be finite, got {value!r}")
    return v


def parse_signed_prior(name: str, entry: Any) -> SignedPrior:
    """A :class:`SignedPrior` from one ``[priors]`` entry of a power-law index.

    ``p = 1.0``, ``{ value = 1.0 }``, ``{ dist = "uniform", low = 0, high = 2 }`` or
    ``{ dist = "normal", mean = 1, sd = 0.3 }``.

    Raises
    ------
    ConfigError
        Naming the key and what to pass.
    """
    where = f"priors.{name}"
    if not isinstance(entry, Mapping):
        entry = {"value": entry}
    entry = dict(entry)
    if "value" in entry:
        if len(entry) > 1:
            raise ConfigError(f"{where}: a fixed value takes no other keys")
        return SignedPrior(name, "fixed", {"value": _real(f"{where}.value", entry["value"])})
    dist = entry.pop("dist", None)
    if dist not in _DISTS:
        raise ConfigError(f"{where}: give value = ... or dist = one of {', '.join(_DISTS)} "
                          f"(a power-law index may be negative), got dist {dist!r}")
    needed = _DISTS[dist]
    missing = [k for k in needed if k not in entry]
    unknown = [k for k in entry if k not in needed]
    if missing or unknown:
        raise ConfigError(f"{where}: {dist} takes {', '.join(needed)}"
                          + (f"; missing {', '.join(missing)}" if missing else "")
                          + (f"; unknown {', '.join(unknown)}" if unknown else ""))
    args = {k: _real(f"{where}.{k}", entry[k]) for k in needed}
    if dist == "uniform" and not args["low"] < args["high"]:
        raise ConfigError(f"{where}: low must be below high")
    if dist == "normal" and args["sd"] <= 0:
        raise ConfigError(f"{where}: sd must be positive")
    return SignedPrior(name, dist, args)


def to_values(name: str, u_col: np.ndarray) -> np.ndarray:
    """The parameter value from its sampled coordinate (ln for positive parameters)."""
    if name in LINEAR:
        return np.asarray(u_col, dtype=float)
    with np.errstate(over="ignore"):
        return np.exp(u_col)


def to_sampled(name: str, x: np.ndarray) -> np.ndarray:
    """The sampled coordinate of a parameter value."""
    if name in LINEAR:
        return np.asarray(x, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log(x)


def log_prior_sampled(prior, u_col: np.ndarray) -> np.ndarray:
    """log prior density in the sampled coordinate (with the Jacobian of ln for positive ones)."""
    if prior.name in LINEAR:
        return prior.logpdf_sampled(u_col)
    return prior.logpdf_ln(u_col)


@dataclass(frozen=True, eq=False)
class RadialPlan:
    """The distinct radii where the model is evaluated, and which one each observation uses.

    Attributes
    ----------
    radii : ndarray (R,)
        Distinct radii, au.
    spacing_col : ndarray of int (E,)
        Index into ``radii`` of each spacing's radius (mean of its two clumps' radii).
    mass_col : ndarray of int (N,)
        Index into ``radii`` of each clump's radius.
    """

    radii: np.ndarray
    spacing_col: np.ndarray
    mass_col: np.ndarray


def radial_plan(spacing_radius_au: np.ndarray, mass_radius_au: np.ndarray) -> RadialPlan:
    """The :class:`RadialPlan` of observations at the given radii (au)."""
    s = np.asarray(spacing_radius_au, dtype=float)
    m = np.asarray(mass_radius_au, dtype=float)
    radii, inv = np.unique(np.concatenate([s, m]), return_inverse=True)
    return RadialPlan(radii, inv[: s.size], inv[s.size:])


def at_radii(v: Mapping[str, np.ndarray], radii: np.ndarray | None) -> dict[str, np.ndarray]:
    """Parameter values at each radius, flattened to (n * R,) (sample-major).

    Parameters
    ----------
    v : mapping name -> ndarray (n,)
        Values at the reference radius, with ``reference_radius`` (au) and the indices.
    radii : ndarray (R,) or None
        Radii in au; None gives the values at ``reference_radius`` itself, shape (n,).

    Returns
    -------
    dict name -> ndarray
        Every entry of ``v``; the profile-scaled ones (see :data:`INDEX_OF`) at each radius,
        ``radius`` set to the radius, the others repeated.
    """
    r0 = np.asarray(v["reference_radius"], dtype=float)
    if radii is None:
        out = dict(v)
        out["radius"] = r0
        return out
    r = np.asarray(radii, dtype=float)
    n, k = r0.size, r.size
    out = {name: np.repeat(np.asarray(x, dtype=float), k) for name, x in v.items()}
    ratio = r[None, :] / r0[:, None]
    for name, index in INDEX_OF.items():
        if name in v:
            out[name] = power_law(np.asarray(v[name], dtype=float)[:, None], ratio,
                                  np.asarray(v.get(index, np.zeros(n)), dtype=float)[:, None]).ravel()
    out["radius"] = np.broadcast_to(r[None, :], (n, k)).ravel()
    return out

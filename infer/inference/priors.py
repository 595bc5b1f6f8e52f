"""Prior distributions of the fit, built from the run config's ``[priors]`` table.

Every sampled parameter is positive and is sampled as u = ln x; the
log-density :meth:`Prior.logpdf_ln` therefore includes the Jacobian
``+ ln x``. Values are held in each parameter's canonical unit (see
:data:`PARAMETERS`). The distributions themselves, one class each, are in
:mod:`infer.inference.distributions`; this module reads the config's syntax.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, ClassVar

import astropy.units as u
import numpy as np

from ..errors import ConfigError
from ..quantities import PARAMETER_NAMES, QUANTITIES
from ..units import parse_quantity
from .distributions import POSITIVE, Distribution, HeldPrior

__all__ = ["ParamInfo", "PARAMETERS", "Prior", "parse_prior", "DISTRIBUTIONS"]


@dataclass(frozen=True)
class ParamInfo:
    """What a config key means: canonical unit, label for plots, whether 0 is allowed."""

    unit: str
    label: str
    allow_zero: bool = False


#: config key -> canonical unit ("" = dimensionless; scatters in dex), plot label; from the registry
PARAMETERS: dict[str, ParamInfo] = {k: ParamInfo(QUANTITIES[k].unit, QUANTITIES[k].label,
                                                 QUANTITIES[k].allow_zero) for k in PARAMETER_NAMES}

#: distribution name -> its keys (all required), from the classes of :data:`POSITIVE`
DISTRIBUTIONS: dict[str, tuple[str, ...]] = {k: cls.keys for k, cls in POSITIVE.items()
                                             if k != "fixed"}

_SCATTERS = ("spacing_scatter", "mass_scatter")


@dataclass(frozen=True)
class Prior(HeldPrior):
    """A fixed value or a distribution for one positive parameter, in its canonical unit.

    Attributes
    ----------
    name : str
        Config key.
    dist : str
        ``"fixed"`` or a key of :data:`DISTRIBUTIONS`.
    args : dict
        Distribution arguments (floats in the canonical unit; ``sigma_dex`` in dex).
    distribution : Distribution
        The distribution object (:data:`~infer.inference.distributions.POSITIVE`), built
        from ``dist`` and ``args``.
    """

    TABLE: ClassVar[dict[str, type[Distribution]]] = POSITIVE

    def logpdf_ln(self, lnx) -> np.ndarray:
        """log density of u = ln x (unnormalised constants dropped), -inf outside support."""
        return self.distribution.logpdf_ln(lnx)

    def describe(self) -> str:
        """Human-readable description with units, e.g. ``loguniform(0.1, 10)``."""
        unit = PARAMETERS[self.name].unit if self.name in PARAMETERS else ""
        unit = f" {unit}" if unit and unit != "dex" else ""
        return self.distribution.describe(unit, scatter=self.name in _SCATTERS)

    def to_config(self) -> dict[str, Any]:
        """The resolved TOML entry (numbers in the canonical unit, units spelled out)."""
        unit = PARAMETERS[self.name].unit if self.name in PARAMETERS else ""

        def q(v: float, key: str = "") -> Any:
            if key == "sigma_dex" or unit in ("", "dex"):
                return float(v)
            return f"{float(v):.17g} {unit}"

        if self.fixed:
            return {"value": q(self.args["value"])}
        out: dict[str, Any] = {"dist": self.dist}
        for k, v in self.args.items():
            key = "scale_dex" if (unit == "dex" and k == "scale") else k
            out[key] = q(v, k)
        return out


def _number(name: str, key: str, value: Any, unit: str, *, allow_zero: bool) -> float:
    where = f"priors.{name}.{key}" if key else f"priors.{name}"
    if unit in ("", "dex"):
        if isinstance(value, bool) or not isinstance(value, (int, float, str)):
            raise ConfigError(f"{where}: expected a number, got {value!r}")
        if isinstance(value, str):
            try:
                q = u.Quantity(value)
            except (TypeError, ValueError):
                raise ConfigError(f"{where}: cannot read {value!r} as a number") from None
            if q.unit != u.dimensionless_unscaled and not (unit == "dex" and q.unit == u.dex):
                raise ConfigError(f"{where}: expected a plain number, got unit {q.unit}")
            v = float(q.value)
        else:
            try:
                v = float(value)
            except OverflowError:
                raise ConfigError(f"{where}: {value} is too large for a floating-point number") from None
    else:
        if isinstance(value, bool) or not isinstance(value, (int, float, str)):
            raise ConfigError(f'{where}: expected a number with a unit such as "1 {unit}", '
                              f"got {value!r}")
        try:
            v = float(parse_quantity(str(value) if isinstance(value, str) else value,
                                     name=where, unit=unit).value)
        except ValueError as exc:
            raise ConfigError(str(exc)) from None
    if not np.isfinite(v):
        raise ConfigError(f"{where}: must be finite, got {value!r}")
    if v < 0 or (v == 0 and not allow_zero):
        raise ConfigError(f"{where}: must be {'non-negative' if allow_zero else 'positive'}, "
                          f"got {value!r}")
    return v


def parse_prior(name: str, entry: Any) -> Prior:
    """Build a :class:`Prior` from one ``[priors]`` entry.

    Parameters
    ----------
    name : str
        Config key (one of :data:`PARAMETERS`).
    entry : str, number or table
        A fixed value (``"0.3 solMass"``, ``{ value = "0.3 solMass" }``) or a
        table with ``dist`` and its keys (see :data:`DISTRIBUTIONS`).

    Raises
    ------
    ConfigError
        Unknown parameter or distribution, missing or unknown keys, wrong
        units, or a prior without support (e.g. low >= high).
    """
    if name not in PARAMETERS:
        raise ConfigError(f"priors.{name}: unknown parameter; known: {', '.join(PARAMETERS)}")
    info = PARAMETERS[name]
    unit = info.unit
    if not isinstance(entry, Mapping):
        entry = {"value": entry}
    entry = dict(entry)
    if "value" in entry:
        extra = set(entry) - {"value"}
        if extra:
            raise ConfigError(f"priors.{name}: a fixed value takes no other keys "
                              f"(got {', '.join(sorted(extra))})")
        value = _number(name, "value", entry["value"], unit, allow_zero=info.allow_zero)
        if name == "ionization" and value > 1.0:
            raise ConfigError(f"priors.{name}.value: an ionization fraction is at most 1, got "
                              f"{value:.4g}")
        return Prior(name, "fixed", {"value": value})
    dist = entry.pop("dist", None)
    if dist is None:
        raise ConfigError(f"priors.{name}: give either value = ... or dist = one of "
                          f"{', '.join(DISTRIBUTIONS)}")
    if not isinstance(dist, str) or dist not in DISTRIBUTIONS:
        raise ConfigError(f"priors.{name}: unknown dist {dist!r}; use one of {', '.join(DISTRIBUTIONS)}")
    if dist == "halfnormal" and "scale_dex" in entry:
        if unit != "dex":
            raise ConfigError(f"priors.{name}: scale_dex is only for the scatter parameters; use scale")
        if "scale" in entry:
            raise ConfigError(f"priors.{name}: give scale_dex or scale, not both")
        entry["scale"] = entry.pop("scale_dex")
    needed = DISTRIBUTIONS[dist]
    missing = [k for k in needed if k not in entry]
    unknown = [k for k in entry if k not in needed]
    if missing:
        raise ConfigError(f"priors.{name}: {dist} needs {', '.join(needed)}; missing {', '.join(missing)}")
    if unknown:
        raise ConfigError(f"priors.{name}: unknown key(s) {', '.join(unknown)} for {dist} "
                          f"(it takes {', '.join(needed)})")
    args: dict[str, float] = {}
    for k in needed:
        if k == "sigma_dex":
            args[k] = _number(name, k, entry[k], "", allow_zero=False)
        elif k == "mean":
            args[k] = _mean(name, entry[k], unit)
        else:
            args[k] = _number(name, k, entry[k], unit, allow_zero=k in ("low",))
    POSITIVE[dist].check(f"priors.{name}", args)
    if name == "ionization" and args.get("high", 0.0) > 1.0:
        raise ConfigError(f"priors.{name}.high: an ionization fraction is at most 1, got "
                          f"{args['high']:.4g}")
    return Prior(name, dist, args)


def _mean(name: str, value: Any, unit: str) -> float:
    """A mean may be any finite number (negative allowed, e.g. a wide normal)."""
    if unit in ("", "dex"):
        try:
            v = float(value) if isinstance(value, (int, float)) and not isinstance(value, bool) else None
        except OverflowError:  # an integer beyond the float range
            v = np.inf
        if v is None:
            raise ConfigError(f"priors.{name}.mean: expected a number, got {value!r}")
    else:
        try:
            v = float(parse_quantity(value, name=f"priors.{name}.mean", unit=unit).value)
        except ValueError as exc:
            raise ConfigError(str(exc)) from None
    if not np.isfinite(v):
        raise ConfigError(f"priors.{name}.mean: must be finite")
    return v

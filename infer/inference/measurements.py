"""Field and column measurements as data: the ``[measurements]`` table of the run config.

Each entry measures one quantity of the model, at the reference radius for a radial profile:

    field           = { value = "1.2 mG", error = "0.4 mG" }    normal error
    mass_to_flux    = { value = 1.5, error_dex = 0.3 }          log-normal error (in dex)
    surface_density = { value = "60 g/cm2", error_dex = 0.2 }
    temperature     = { value = "35 K", error = "5 K" }

and adds one term to the log-likelihood (:func:`measurement_loglike`): a normal density of
the measured value about the model's value, or a normal density of its logarithm (the usual
choice for polarization-based field estimates, whose systematics are multiplicative). The
same function gives the importance weights of a measurement forecast
(:mod:`infer.inference.forecast`), so that forecasting a measurement and fitting it agree.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import astropy.units as u
import numpy as np

from ..errors import ConfigError
from ..units import parse_quantity

__all__ = ["Measurement", "MEASURED_UNITS", "measurement_loglike", "parse_measurements"]

#: measurable quantity -> canonical unit (that of its summary row)
MEASURED_UNITS: dict[str, str] = {
    "field": "mG",
    "mass_to_flux": "",
    "surface_density": "g / cm2",
    "temperature": "K",
}

_LN10 = np.log(10.0)
_HALF_LN2PI = 0.5 * np.log(2.0 * np.pi)


def measurement_loglike(x, *, value, sd=None, sd_ln=None) -> np.ndarray:
    """Log-likelihood of a measurement ``value`` for model values ``x`` (broadcast).

    Parameters
    ----------
    x : array_like
        The model's value of the measured quantity.
    value : array_like
        The measured value (same unit).
    sd : float, optional
        One-sigma error of a normal measurement (same unit).
    sd_ln : float, optional
        One-sigma error of ln(value) for a log-normal measurement; give one of the two.

    Returns
    -------
    ndarray
        ``ln Normal(value; x, sd^2)`` or ``ln Normal(ln value; ln x, sd_ln^2)``; -inf where
        x is not finite (or not positive, log-normal).
    """
    x = np.asarray(x, dtype=float)
    if (sd is None) == (sd_ln is None):
        raise ValueError("give exactly one of sd and sd_ln")
    with np.errstate(invalid="ignore", divide="ignore"):
        if sd is not None:
            out = -0.5 * ((x - value) / sd) ** 2 - (np.log(sd) + _HALF_LN2PI)
        else:
            out = -0.5 * ((np.log(x) - np.log(value)) / sd_ln) ** 2 - (np.log(sd_ln) + _HALF_LN2PI)
    return np.where(np.isfinite(out), out, -np.inf)


@dataclass(frozen=True)
class Measurement:
    """One measured quantity with its error.

    Attributes
    ----------
    name : str
        A key of :data:`MEASURED_UNITS`.
    value : float
        In the canonical unit.
    error : float or None
        Normal one-sigma error, canonical unit.
    error_dex : float or None
        Log-normal one-sigma error, dex.
    """

    name: str
    value: float
    error: float | None = None
    error_dex: float | None = None

    @property
    def unit(self) -> str:
        return MEASURED_UNITS[self.name]

    def loglike(self, x) -> np.ndarray:
        """The likelihood term for model values ``x`` (canonical unit)."""
        if self.error is not None:
            return measurement_loglike(x, value=self.value, sd=self.error)
        return measurement_loglike(x, value=self.value, sd_ln=self.error_dex * _LN10)

    def describe(self) -> str:
        unit = f" {self.unit}" if self.unit else ""
        if self.error is not None:
            return f"{self.name} = {self.value:.4g} +- {self.error:.3g}{unit} (normal)"
        return f"{self.name} = {self.value:.4g}{unit}, {self.error_dex:.3g} dex (log-normal)"

    def to_config(self) -> dict[str, Any]:
        unit = f" {self.unit}" if self.unit else ""

        def q(v: float) -> Any:
            return f"{v:.17g}{unit}" if unit else float(v)

        out: dict[str, Any] = {"value": q(self.value)}
        if self.error is not None:
            out["error"] = q(self.error)
        else:
            out["error_dex"] = float(self.error_dex)
        return out


def _number(where: str, value: Any, unit: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise ConfigError(f"{where}: expected {'a number' if not unit else 'a value with a unit'}, "
                          f"got {value!r}")
    try:
        if unit:
            v = float(parse_quantity(value, name=where, unit=unit).value)
        elif isinstance(value, str):
            q = u.Quantity(value)
            if q.unit != u.dimensionless_unscaled:
                raise ConfigError(f"{where}: expected a plain number, got unit {q.unit}")
            v = float(q.value)
        else:
            v = float(value)
    except ConfigError:
        raise
    except (ValueError, TypeError, OverflowError) as exc:
        raise ConfigError(f"{where}: {exc}" if str(exc).startswith(where) else
                          f"{where}: cannot read {value!r}") from None
    if not (np.isfinite(v) and v > 0):
        raise ConfigError(f"{where}: must be positive and finite, got {value!r}")
    return v


def parse_measurements(tab: Mapping[str, Any]) -> dict[str, Measurement]:
    """Validate the ``[measurements]`` table.

    Raises
    ------
    ConfigError
        Unknown quantity, missing or extra keys, both or neither of ``error`` and
        ``error_dex``, wrong or missing units, non-positive values.
    """
    out: dict[str, Measurement] = {}
    for name, entry in tab.items():
        where = f"measurements.{name}"
        if name not in MEASURED_UNITS:
            raise ConfigError(f"{where}: unknown quantity; measurable: {', '.join(MEASURED_UNITS)}")
        unit = MEASURED_UNITS[name]
        example = {"field": '"1.2 mG"', "mass_to_flux": "1.5", "surface_density": '"60 g/cm2"',
                   "temperature": '"35 K"'}[name]
        if not isinstance(entry, Mapping):
            raise ConfigError(f"{where}: expected {{ value = {example}, error = ... }} or "
                              f"{{ value = {example}, error_dex = 0.3 }}")
        bad = set(entry) - {"value", "error", "error_dex"}
        if bad:
            raise ConfigError(f"{where}.{sorted(bad)[0]}: unknown key; use value with error or "
                              f"error_dex")
        if "value" not in entry:
            raise ConfigError(f"{where}: value is missing, e.g. value = {example}")
        if ("error" in entry) == ("error_dex" in entry):
            raise ConfigError(f"{where}: give one of error (normal, in the value's unit) and "
                              f"error_dex (log-normal, in dex)")
        value = _number(f"{where}.value", entry["value"], unit)
        if "error" in entry:
            out[name] = Measurement(name, value, error=_number(f"{where}.error", entry["error"], unit))
        else:
            out[name] = Measurement(name, value,
                                    error_dex=_number(f"{where}.error_dex", entry["error_dex"], ""))
    return out

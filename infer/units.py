"""Quantities at the boundary: parsing "120 g/cm2", checking physical types.

Every public function of the package takes astropy Quantity (or a string that
astropy.units can parse) and turns it here into a plain cgs float array.
"""

from __future__ import annotations

from typing import Any

import astropy.units as u
import numpy as np

from .errors import InferError

__all__ = ["parse_quantity", "to_cgs", "dimensionless"]


def parse_quantity(value: Any, *, name: str, unit: u.UnitBase | str) -> u.Quantity:
    """Turn ``value`` into a Quantity convertible to ``unit``.

    Parameters
    ----------
    value : Quantity, str, or number
        A Quantity, or a string such as ``"80 g/cm2"`` (number then unit).
        A bare number is accepted only when ``unit`` is dimensionless.
    name : str
        Name of the argument or option, used in error messages.
    unit : astropy unit or str
        Unit the value must be convertible to.

    Returns
    -------
    Quantity
        ``value`` as a Quantity in ``unit``.

    Raises
    ------
    InferError
        If the value has no unit, a unit of the wrong kind, or cannot be parsed.
    """
    target = u.Unit(unit)
    example = _example(target)
    if isinstance(value, str):
        text = value.strip()
        try:
            q = u.Quantity(text)
        except (TypeError, ValueError):
            q = None
        if q is None:
            raise InferError(
                f"{name}: cannot read {value!r} as a number with a unit; pass e.g. {example}"
            )
        value = q
    if isinstance(value, u.Quantity):
        if target == u.dimensionless_unscaled and value.unit.physical_type != "dimensionless":
            raise InferError(f"{name}: expected a plain number, got unit {value.unit}")
        if value.unit == u.dimensionless_unscaled and target.physical_type != "dimensionless":
            raise InferError(f"{name}: {value.value.tolist()!r} has no unit; pass e.g. {example}")
        try:
            with np.errstate(over="ignore"):   # an overflow gives inf; callers refuse it
                return value.to(target)
        except u.UnitConversionError:
            raise InferError(
                f"{name}: unit {value.unit} is not a {target.physical_type} "
                f"(convertible to {target.to_string()}); pass e.g. {example}"
            ) from None
    if target == u.dimensionless_unscaled or target.physical_type == "dimensionless":
        try:
            if value is None:   # numpy would make it NaN
                raise TypeError
            arr = np.asarray(value, dtype=float)
        except (TypeError, ValueError, OverflowError):
            raise InferError(f"{name}: expected a number, got {_short(value)}") from None
        return u.Quantity(arr, target)
    raise InferError(f"{name}: {value!r} has no unit; pass a Quantity or a string like {example}")


def to_cgs(value: Any, *, name: str, unit: u.UnitBase | str) -> np.ndarray:
    """Like :func:`parse_quantity`, returning a float ndarray in ``unit``.

    NaN and infinite entries are rejected with an :class:`InferError`.
    """
    q = parse_quantity(value, name=name, unit=unit)
    arr = np.asarray(q.to_value(u.Unit(unit)), dtype=float)
    if not np.all(np.isfinite(arr)):
        raise InferError(f"{name}: contains NaN or infinite values (or values beyond the "
                         f"floating-point range in {u.Unit(unit).to_string()}); pass finite numbers")
    return arr


def dimensionless(value: Any, *, name: str) -> np.ndarray:
    """A finite float array from a number or dimensionless Quantity."""
    return to_cgs(value, name=name, unit=u.dimensionless_unscaled)


_EXAMPLES = {
    "surface mass density": '"80 g/cm2"',
    "temperature": '"40 K"',
    "magnetic flux density": '"1.5 mG"',
    "diffusivity": '"1e18 cm2/s"',
    "frequency": '"2e-10 1/s"',
    "mass": '"0.4 solMass"',
    "length": '"100 au"',
    "pressure": '"1e-8 dyn/cm2"',
    "energy density": '"1e-8 dyn/cm2"',
    "column density": '"2e25 cm-2"',
    "time": '"1e5 yr"',
    "angle": '"45 deg"',
}


def _short(value: Any) -> str:
    """repr of a value for a one-line message, shortened if long."""
    text = repr(value)
    return text if len(text) <= 60 else text[:40] + "..." + text[-10:]


def _example(unit: u.UnitBase) -> str:
    names = set(str(unit.physical_type).split("/"))
    for key, ex in _EXAMPLES.items():
        if key in names:
            return ex
    if unit == u.cm**-2:
        return _EXAMPLES["column density"]
    if unit.is_equivalent(u.cm**2 / u.s):
        return _EXAMPLES["diffusivity"]
    return f'"1 {unit.to_string()}"'

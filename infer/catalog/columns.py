"""Catalog columns: which columns a file uses, and their cells checked one by one.

Part of :mod:`infer.catalog.regions`. Every problem is a :class:`~infer.errors.CatalogError`
naming the file, the row (counting data rows from 1) with its id, and the
column, and saying what to fix.
"""

from __future__ import annotations

from dataclasses import dataclass

import astropy.units as u
import numpy as np

from ..errors import CatalogError
from .read import RawCatalog

__all__ = ["Cells", "Layout", "Values", "column_layout", "column_values", "is_kind"]

# ---------------------------------------------------------------- cells ----

class Cells:
    """Access to validated cells, with messages naming file, row, id and column."""

    def __init__(self, raw: RawCatalog):
        self.raw = raw
        self.src = raw.source
        self.ids: list[str] | None = None

    def at(self, i: int, column: str) -> str:
        who = f" (id {self.ids[i]!r})" if self.ids is not None else ""
        return f"{self.src}: row {i + 1}{who}, column {column!r}"

    def text(self, name: str) -> list[str]:
        """The column's cells as stripped text; an empty cell is an error."""
        col = self.raw.columns[name]
        mask = np.ma.getmaskarray(col)
        out = []
        for i, cell in enumerate(np.ma.getdata(col)):
            value = "" if mask[i] else str(cell).strip()
            if not value:
                raise CatalogError(f"{self.at(i, name)}: the cell is empty; give every row "
                                   f"a{'n id' if name == 'id' else ' value'}")
            out.append(value)
        return out

    def numbers(self, name: str) -> np.ndarray:
        """The column as finite floats; empty, non-numeric, NaN or infinite cells are errors."""
        col = self.raw.columns[name]
        mask = np.ma.getmaskarray(col)
        if mask.any():
            i = int(np.flatnonzero(mask)[0])
            raise CatalogError(f"{self.at(i, name)}: the cell is empty; fill it in or remove "
                               f"the row")
        data = np.ma.getdata(col)
        if data.dtype.kind in "iuf":
            vals = data.astype(float)
        else:
            vals = np.empty(len(data))
            for i, cell in enumerate(data):
                try:
                    if isinstance(cell, (bool, np.bool_)):
                        raise ValueError
                    vals[i] = float(str(cell).strip())
                except (ValueError, TypeError, OverflowError):
                    raise CatalogError(f"{self.at(i, name)}: {str(cell)[:40]!r} is not a "
                                       f"number; give a plain number") from None
        bad = np.flatnonzero(~np.isfinite(vals))
        if bad.size:
            i = int(bad[0])
            raise CatalogError(f"{self.at(i, name)}: the value is {float(vals[i])}; give a "
                               f"finite number")
        return vals

    def unit(self, name: str, kinds: tuple[str, ...], example: str) -> u.UnitBase | None:
        """The column's unit, checked against physical types; None if it has none."""
        if name in self.raw.unit_problems:
            raise CatalogError(f"{self.src}: column {name!r}: {self.raw.unit_problems[name]}; "
                               f"write e.g. {example}")
        unit = self.raw.units.get(name)
        if unit is None or unit == u.dimensionless_unscaled:
            return None
        if not any(is_kind(unit, k) for k in kinds):
            raise CatalogError(f"{self.src}: column {name!r} has unit {unit}, "
                               f"{_describe(unit)}; {_KIND_HINT[name]}")
        return unit


_KIND_HINT = {
    "x": "x and y need a length (au, pc) or angle (arcsec) unit",
    "y": "x and y need a length (au, pc) or angle (arcsec) unit",
    "ra": "ra and dec are angles in degrees",
    "dec": "ra and dec are angles in degrees",
    "x_err": "position errors need a length (au) or angle (arcsec) unit",
    "y_err": "position errors need a length (au) or angle (arcsec) unit",
    "pos_err": "position errors need a length (au) or angle (arcsec) unit",
    "mass": "masses need a mass unit (solMass, jupiterMass); for continuum fluxes name the "
            "column 'flux' and give the dust settings",
    "mass_err": "mass errors need a mass unit (solMass, jupiterMass)",
    "flux": "fluxes need an integrated flux-density unit (Jy, mJy); for masses name the "
            "column 'mass'",
    "flux_err": "flux errors need an integrated flux-density unit (Jy, mJy)",
}


def is_kind(unit: u.UnitBase, kind: str) -> bool:
    ref = {"length": u.m, "angle": u.deg, "mass": u.kg, "flux": u.Jy}[kind]
    return unit.is_equivalent(ref)


def _describe(unit: u.UnitBase) -> str:
    if unit.is_equivalent(u.Jy):
        return "a flux density"
    if unit.is_equivalent(u.Jy / u.beam):
        return "a flux density per beam (give integrated fluxes)"
    kind = str(unit.physical_type)
    return f"a {kind}" if kind != "unknown" else "not a known physical quantity"


# --------------------------------------------------------------- layout ----

@dataclass
class Layout:
    """Which columns the catalog uses."""

    positions: str                 # "xy" or "radec"
    errors: str | None             # "xy", "pos" or None
    masses: str                    # "mass" or "flux"
    has_err: bool                  # mass_err / flux_err present
    notes: list[str]


def column_layout(raw: RawCatalog) -> Layout:
    """Decide which position, error and mass columns the catalog uses.

    Raises a CatalogError for missing or contradictory columns; notes (unused
    columns, missing errors) go into ``Layout.notes``.
    """
    cols = set(raw.columns)
    src = raw.source
    found = ", ".join(raw.columns)
    notes: list[str] = []
    if "id" not in cols:
        raise CatalogError(f"{src}: no 'id' column; a catalog needs the columns id, x and y "
                           f"(or ra and dec), and mass (or flux); found: {found}")
    if "x" in cols or "y" in cols:
        for c in ("x", "y"):
            if c not in cols:
                raise CatalogError(f"{src}: column {c!r} is missing; positions need both x "
                                   f"and y; found: {found}")
        positions = "xy"
        if {"ra", "dec"} & cols:
            notes.append("columns ra/dec are not used: the positions come from x and y")
    elif "ra" in cols or "dec" in cols:
        for c in ("ra", "dec"):
            if c not in cols:
                raise CatalogError(f"{src}: column {c!r} is missing; sky positions need both "
                                   f"ra and dec; found: {found}")
        positions = "radec"
    else:
        raise CatalogError(f"{src}: no position columns; give x and y (offsets with a length "
                           f"or angle unit) or ra and dec (degrees); found: {found}")
    if "pos_err" in cols and ({"x_err", "y_err"} & cols):
        raise CatalogError(f"{src}: give either pos_err or x_err and y_err, not both")
    if ("x_err" in cols) != ("y_err" in cols):
        missing = "y_err" if "x_err" in cols else "x_err"
        raise CatalogError(f"{src}: column {missing!r} is missing; give both x_err and y_err, "
                           f"or one pos_err column")
    errors = "xy" if "x_err" in cols else ("pos" if "pos_err" in cols else None)
    if "mass" in cols:
        masses = "mass"
        if "flux" in cols:
            notes.append("column flux is not used: the masses come from the mass column")
    elif "flux" in cols:
        masses = "flux"
    else:
        raise CatalogError(f"{src}: no 'mass' or 'flux' column; give masses (with a mass "
                           f"unit) or continuum fluxes (Jy) with the dust settings; found: {found}")
    has_err = f"{masses}_err" in cols
    if not has_err:
        notes.append(f"no {masses}_err column: the {masses}es are taken as exact (only the "
                     f"intrinsic scatter is fitted)")
    used = {"id", "group", masses, f"{masses}_err", "x_err", "y_err", "pos_err"}
    used |= {"x", "y", "ra", "dec"}           # ra/dec beside x/y are reported above
    used |= {"flux"} if masses == "mass" else set()
    unused = [c for c in raw.columns if c not in used]
    if unused:
        notes.append(f"columns not used: {', '.join(unused)}")
    return Layout(positions=positions, errors=errors, masses=masses, has_err=has_err,
                   notes=notes)


# ---------------------------------------------------------------- values ----

@dataclass
class Values:
    """Checked column values (see :func:`column_values`)."""

    pos: tuple[np.ndarray, np.ndarray]
    pos_unit: u.UnitBase | None          # None: ra/dec in degrees
    err: tuple[np.ndarray, np.ndarray] | None
    err_unit: u.UnitBase | None
    amount: np.ndarray
    amount_err: np.ndarray | None
    amount_unit: u.UnitBase


def column_values(cells: Cells, lay: Layout) -> Values:
    """Check the units and every cell of the used columns; positions, errors, masses or fluxes.

    Values are returned in the column's own unit (y and the errors converted to
    the unit of x and of the first error column; ra/dec in degrees).
    """
    src = cells.src
    if lay.positions == "xy":
        ux = cells.unit("x", ("length", "angle"), "'x [au]' or 'x [arcsec]'")
        uy = cells.unit("y", ("length", "angle"), "'y [au]' or 'y [arcsec]'")
        for c, un in (("x", ux), ("y", uy)):
            if un is None:
                raise CatalogError(f"{src}: column {c!r} has no unit; give a length (au) or "
                                   f"angle (arcsec) unit, e.g. a CSV header '{c} [au]' or "
                                   f"units = {{ {c} = \"au\" }} in the run config [catalog]")
        if is_kind(ux, "length") != is_kind(uy, "length"):
            raise CatalogError(f"{src}: columns x ({ux}) and y ({uy}) must both be lengths or "
                               f"both angles")
        pos = (cells.numbers("x"), cells.numbers("y") * float(uy.to(ux)))
        pos_unit: u.UnitBase | None = ux
    else:
        ura = cells.unit("ra", ("angle",), "'ra [deg]'") or u.deg
        udec = cells.unit("dec", ("angle",), "'dec [deg]'") or u.deg
        ra = cells.numbers("ra") * float(ura.to(u.deg))
        dec = cells.numbers("dec") * float(udec.to(u.deg))
        bad = np.flatnonzero(np.abs(dec) > 90.0)
        if bad.size:
            raise CatalogError(f"{cells.at(int(bad[0]), 'dec')}: {float(dec[bad[0]]):g} deg is not a "
                               f"declination; it must lie between -90 and 90 deg")
        pos, pos_unit = (ra, dec), None
    err = err_unit = None
    if lay.errors is not None:
        names = ("x_err", "y_err") if lay.errors == "xy" else ("pos_err", "pos_err")
        units = [cells.unit(n, ("length", "angle"), f"'{n} [au]' or '{n} [arcsec]'") for n in names]
        for n, un in zip(names, units, strict=True):
            if un is None:
                raise CatalogError(f"{src}: column {n!r} has no unit; give a length (au) or "
                                   f"angle (arcsec) unit")
        if is_kind(units[0], "length") != is_kind(units[1], "length"):
            raise CatalogError(f"{src}: columns x_err and y_err must both be lengths or both "
                               f"angles")
        err = (cells.numbers(names[0]), cells.numbers(names[1]) * float(units[1].to(units[0])))
        err_unit = units[0]
        for n, e in zip(names, err, strict=True):
            _non_negative(cells, n, e)
    kind = "mass" if lay.masses == "mass" else "flux"
    example = "'mass [solMass]'" if kind == "mass" else "'flux [Jy]'"
    amount_unit = cells.unit(lay.masses, (kind,), example)
    if amount_unit is None:
        unit_text = "solMass" if kind == "mass" else "Jy"
        raise CatalogError(f"{src}: column {lay.masses!r} has no unit; give e.g. a CSV header "
                           f"{example} or units = {{ {lay.masses} = \"{unit_text}\" }} in the "
                           f"run config [catalog]")
    amount = cells.numbers(lay.masses)
    bad = np.flatnonzero(amount <= 0)
    if bad.size:
        i = int(bad[0])
        raise CatalogError(f"{cells.at(i, lay.masses)}: {float(amount[i]):g} is not positive; every "
                           f"{kind} must be > 0")
    amount_err = None
    if lay.has_err:
        name = f"{lay.masses}_err"
        eu = cells.unit(name, (kind,), f"'{name} [{'solMass' if kind == 'mass' else 'Jy'}]'")
        if eu is None:
            raise CatalogError(f"{src}: column {name!r} has no unit; give the same kind of unit "
                               f"as column {lay.masses!r}")
        amount_err = cells.numbers(name) * float(eu.to(amount_unit))
        _non_negative(cells, name, amount_err)
    return Values(pos=pos, pos_unit=pos_unit, err=err, err_unit=err_unit, amount=amount,
                   amount_err=amount_err, amount_unit=amount_unit)


def _non_negative(cells: Cells, name: str, data: np.ndarray) -> None:
    bad = np.flatnonzero(data < 0)
    if bad.size:
        i = int(bad[0])
        raise CatalogError(f"{cells.at(i, name)}: {float(data[i]):g} is negative; an error must "
                           f"be >= 0")


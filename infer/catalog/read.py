"""Reading a clump catalog file: any file -> columns, units and header metadata.

This module only reads; :mod:`infer.catalog.regions` validates. Every failure of the
file system or of an astropy reader becomes a :class:`~infer.errors.CatalogError`
whose message names the file and says what to do.

Formats, chosen by the file name (or by the first bytes when the name does
not tell): ECSV (``.ecsv``; preferred, carries units and metadata), CSV
(``.csv``; units in the header as ``mass [solMass]``, metadata as comment
lines ``# distance = 140 pc``), FITS (``.fits``, ``.fit``, ``.fts``) and
VOTable (``.xml``, ``.vot``, ``.votable``).
"""

from __future__ import annotations

import csv
import re
import warnings
from collections.abc import Mapping
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import astropy.units as u
import numpy as np
from astropy.io.ascii import convert_numpy
from astropy.table import Column, Table

from ..errors import CatalogError

__all__ = ["RawCatalog", "read_table", "FORMATS"]

#: file-name ending -> (astropy format, label for messages)
FORMATS: dict[str, tuple[str, str]] = {
    ".ecsv": ("ascii.ecsv", "ECSV"),
    ".csv": ("ascii.csv", "CSV"),
    ".fits": ("fits", "FITS"),
    ".fit": ("fits", "FITS"),
    ".fts": ("fits", "FITS"),
    ".xml": ("votable", "VOTable"),
    ".vot": ("votable", "VOTable"),
    ".votable": ("votable", "VOTable"),
}

_NAME_UNIT = re.compile(r"^\s*([^\[\]()]+?)\s*[\[(]\s*([^\[\]()]*?)\s*[\])]\s*$")
_BOM = b"\xef\xbb\xbf"
_COMMENT_META = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_]*)\s*[:=]\s*(.+?)\s*$")


@dataclass(frozen=True, eq=False)
class RawCatalog:
    """A catalog file as read, before validation.

    Attributes
    ----------
    source : str
        The file path as given.
    columns : dict[str, ndarray]
        Lower-case column name -> values (a masked array where cells are empty).
    units : dict[str, UnitBase or None]
        Column name -> unit (None for no unit).
    unit_problems : dict[str, str]
        Column name -> why its unit could not be used (raised only if the column is).
    meta : dict
        Header metadata with lower-case keys.
    n_rows : int
    warnings : tuple of str
        Reader notes (e.g. a unit taken from the run config instead of the file).
    """

    source: str
    columns: dict[str, np.ndarray]
    units: dict[str, u.UnitBase | None]
    unit_problems: dict[str, str]
    meta: dict[str, Any]
    n_rows: int
    warnings: tuple[str, ...]

    def subset(self, rows: np.ndarray) -> RawCatalog:
        """The same catalog with only ``rows`` (indices, in that order), e.g. one group."""
        rows = np.asarray(rows, dtype=int)
        return replace(self, columns={k: v[rows] for k, v in self.columns.items()},
                       n_rows=int(rows.size))


def _one_line(exc: BaseException) -> str:
    text = " ".join(str(exc).split())
    if len(text) > 200:
        text = text[:197] + "..."
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__


def _format_of(path: Path, head: bytes) -> tuple[str, str]:
    name = path.name.lower()
    for ending, fmt in FORMATS.items():
        if name.endswith(ending):
            if fmt[0] == "ascii.csv" and head.removeprefix(_BOM).lstrip().startswith(b"# %ECSV"):
                return FORMATS[".ecsv"]
            return fmt
    if head.removeprefix(_BOM).startswith(b"# %ECSV"):
        return FORMATS[".ecsv"]
    if head.startswith(b"SIMPLE  ="):
        return FORMATS[".fits"]
    if b"<VOTABLE" in head[:2048].upper():
        return FORMATS[".xml"]
    raise CatalogError(f"{path}: unknown catalog format (file name ending {path.suffix!r}); "
                       f"save it as .ecsv (preferred), .csv, .fits or .xml (VOTable)")


def _check_content(path: Path, data: bytes, fmt: str, label: str) -> None:
    if not data.strip():
        raise CatalogError(f"{path}: the file is empty; a catalog needs a header and one row "
                           f"per clump")
    if fmt.startswith("ascii") or fmt == "votable":
        if b"\x00" in data:
            raise CatalogError(f"{path}: not a text file (it contains binary data); a {label} "
                               f"catalog must be UTF-8 text")
        try:
            data.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise CatalogError(f"{path}: not UTF-8 text (undecodable byte at position "
                               f"{exc.start}); save the {label} catalog as UTF-8") from None
    if fmt == "ascii.ecsv" and not data.removeprefix(_BOM).lstrip().startswith(b"# %ECSV"):
        raise CatalogError(f"{path}: does not start with the '# %ECSV' header line; write it "
                           f"with astropy (Table.write(..., format='ascii.ecsv')), or name a "
                           f"plain comma-separated file .csv")
    if fmt == "fits" and not data.startswith(b"SIMPLE  ="):
        raise CatalogError(f"{path}: not a FITS file (no 'SIMPLE' card at the start)")


def _read(path: Path, fmt: str, label: str) -> tuple[Table, list[str]]:
    kwargs: dict[str, Any] = {"format": fmt}
    if fmt.startswith("ascii"):
        kwargs.update(guess=False, encoding="utf-8-sig")     # tolerate a byte-order mark
    if fmt == "ascii.csv":
        # every cell as text: ids stay as written, and numbers are checked cell by cell
        kwargs.update(comment="#", converters={"*": [convert_numpy(str)]})
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            table = Table.read(path, **kwargs)
        except Exception as exc:  # noqa: BLE001 - any reader failure is a bad file
            raise CatalogError(f"{path}: cannot be read as {label} ({_one_line(exc)}); "
                               f"check that the file is a valid {label} table") from None
    notes = [f"reader: {' '.join(str(w.message).split())[:200]}" for w in caught
             if not issubclass(w.category, u.UnitsWarning)]
    return table, notes[:5]


def _normal_name(raw_name: str) -> tuple[str, str | None]:
    """'mass [solMass]' -> ('mass', 'solMass'); 'Mass' -> ('mass', None)."""
    m = _NAME_UNIT.match(raw_name)
    if m:
        return m.group(1).strip().lower(), m.group(2) or None
    return raw_name.strip().lower(), None


def _csv_header_names(path: Path, data: bytes) -> None:
    """Reject repeated CSV column names (astropy would rename them silently)."""
    for line in data.decode("utf-8-sig").splitlines():
        if line.strip() and not line.lstrip().startswith("#"):
            names = [_normal_name(n)[0] for n in next(csv.reader([line]))]
            seen = set()
            for name in names:
                if name in seen:
                    raise CatalogError(f"{path}: column {name!r} appears twice in the header; "
                                       f"rename or remove one")
                seen.add(name)
            return


def _parse_unit(text: str) -> u.UnitBase:
    try:
        return u.Unit(text, parse_strict="raise")
    except ValueError:
        return u.Unit(text, format="fits", parse_strict="raise")


def _column_unit(col: Column) -> tuple[u.UnitBase | None, str | None]:
    unit = col.unit
    if unit is None or unit == "":
        return None, None
    if isinstance(unit, u.UnrecognizedUnit):
        try:
            return _parse_unit(unit.name), None
        except (ValueError, TypeError):
            return None, f"unit {unit.name!r} is not a unit astropy understands"
    return unit, None


def _values(col) -> np.ndarray:
    if not isinstance(col, Column):
        raise TypeError(type(col).__name__)
    data = np.ma.asarray(col)
    if data.dtype.kind == "S":
        data = np.ma.array(np.char.decode(np.ma.getdata(data), "utf-8", "replace"),
                           mask=np.ma.getmaskarray(data))
    if not np.ma.getmaskarray(data).any():
        data = np.asarray(np.ma.getdata(data))
    return data


def _meta(table: Table) -> dict[str, Any]:
    meta: dict[str, Any] = {}
    for key, value in table.meta.items():
        if not isinstance(key, str):
            continue
        k = key.strip().lower()
        if k == "comments" and isinstance(value, list):
            for line in value:
                m = _COMMENT_META.match(str(line))
                if m:
                    meta.setdefault(m.group(1).lower(), m.group(2))
            continue
        meta[k] = value
    return meta


def read_table(path: str | Path, *, units: Mapping[str, Any] | None = None) -> RawCatalog:
    """Read a catalog file into plain columns, units and metadata.

    Parameters
    ----------
    path : str or Path
    units : mapping, optional
        Column name -> unit string (the run config's ``[catalog.units]``),
        for columns whose unit the file does not carry; when the file gives a
        different unit, this one is used and a warning says so.

    Returns
    -------
    RawCatalog

    Raises
    ------
    CatalogError
        For a missing, empty, binary or unreadable file, a table without rows,
        multidimensional or non-plain columns, duplicate column names, or a
        header unit that contradicts the column's own unit.
    """
    p = Path(path)
    try:
        return _read_table(p, str(path), units)
    except CatalogError:
        raise
    except Exception as exc:  # noqa: BLE001 - astropy/numpy failures on odd content
        raise CatalogError(f"{p}: cannot be read ({_one_line(exc)}); check that it is a valid "
                           f"catalog table") from None


def _read_table(p: Path, source: str, units: Mapping[str, Any] | None) -> RawCatalog:
    if not p.exists():
        raise CatalogError(f"{p}: no such file; check the path")
    if p.is_dir():
        raise CatalogError(f"{p}: is a folder, not a catalog file")
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise CatalogError(f"{p}: cannot be read ({_one_line(exc)})") from None
    fmt, label = _format_of(p, data[:4096])
    _check_content(p, data, fmt, label)
    if fmt == "ascii.csv":
        _csv_header_names(p, data)
    table, notes = _read(p, fmt, label)
    if len(table.colnames) == 0 or len(table) == 0:
        raise CatalogError(f"{p}: the table has no rows; give one row per clump")

    override_units = _override_units(p, units)
    columns: dict[str, np.ndarray] = {}
    col_units: dict[str, u.UnitBase | None] = {}
    problems: dict[str, str] = {}
    for raw_name in table.colnames:
        name, head_text = _normal_name(str(raw_name))
        if name in columns:
            raise CatalogError(f"{p}: column {name!r} appears twice; rename or remove one")
        try:
            columns[name] = _values(table[raw_name])
        except TypeError:
            raise CatalogError(f"{p}: column {name!r} holds {type(table[raw_name]).__name__} "
                               f"objects; store plain numbers or text") from None
        if columns[name].ndim != 1:
            raise CatalogError(f"{p}: column {name!r} has several values per row; give one "
                               f"value per cell")
        unit, problem = _column_unit(table[raw_name])
        if head_text:
            try:
                head_unit = _parse_unit(head_text)
            except (ValueError, TypeError):
                head_unit, problem = None, f"unit {head_text!r} is not a unit astropy understands"
            if head_unit is not None and unit is not None and unit != head_unit:
                raise CatalogError(f"{p}: column {name!r}: the header says {head_unit} but the "
                                   f"column's unit is {unit}; keep one")
            unit = head_unit if head_unit is not None else unit
        if name in override_units:
            new = override_units[name]
            if unit is not None and unit != new:
                notes.append(f"column {name!r}: unit {new} from the run config replaces the "
                             f"file's {unit}")
            unit, problem = new, None
        col_units[name] = unit
        if problem:
            problems[name] = problem
    for name in override_units:
        if name not in columns:
            raise CatalogError(f"{p}: the run config gives a unit for column {name!r}, which "
                               f"the file does not have; columns are {', '.join(columns)}")
    return RawCatalog(source=source, columns=columns, units=col_units, unit_problems=problems,
                      meta=_meta(table), n_rows=len(table), warnings=tuple(notes))


def _override_units(path: Path, units: Mapping[str, Any] | None) -> dict[str, u.UnitBase]:
    if units is None:
        return {}
    if not isinstance(units, Mapping):
        raise CatalogError(f"{path}: the run config's catalog 'units' must be a table of "
                           f"column = \"unit\", e.g. units = {{ mass = \"solMass\" }}")
    out = {}
    for name, text in units.items():
        try:
            out[str(name).strip().lower()] = _parse_unit(str(text))
        except (ValueError, TypeError):
            raise CatalogError(f"{path}: the run config gives column {name!r} the unit "
                               f"{text!r}, which astropy does not understand") from None
    return out

"""Clump catalogs -> validated regions: deprojected positions, spacings, masses.

:func:`read_catalog` reads a catalog file (see :mod:`infer.catalog.read` for
the formats), checks every cell, resolves the metadata (file header and the
run config's ``[catalog]`` table, see :mod:`infer.catalog.metadata`), and returns
one :class:`Region` per value of the optional ``group`` column.

Columns (names are case-insensitive):

* ``id`` -- clump name, unique within a region;
* positions: ``x``, ``y`` offsets from the star or cloud centre with a length
  or angle unit (``x`` to the east, ``y`` to the north), or ``ra``, ``dec`` in
  degrees (offsets from the ``center_ra`` / ``center_dec`` metadata or from
  the mean position);
* optional position errors: ``x_err`` and ``y_err``, or ``pos_err`` (both
  directions), with a length or angle unit;
* masses: ``mass`` (+ ``mass_err``) with a mass unit, or continuum ``flux``
  (+ ``flux_err``) with a flux-density unit (converted with
  :mod:`infer.catalog.dustmass`);
* optional ``group``: several regions in one file.

Problems are :class:`~infer.errors.CatalogError` naming the file, the row (and
its id) and the column, and saying what to fix. Rows are never dropped
silently: the only exclusions are the ids listed in the run config's
``exclude``, and each is reported in :attr:`Region.excluded`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import astropy.units as u
import numpy as np
from astropy.coordinates import SkyCoord
from scipy.spatial import cKDTree

from ..errors import CatalogError
from . import geometry
from .columns import Cells, column_layout, column_values, is_kind
from .dustmass import dust_mass
from .geometry import SPACING_METHODS
from .limits import selection_limits
from .metadata import OVERRIDE_KEYS, dust_settings, resolve_metadata
from .read import read_table
from .summary import summarize

__all__ = ["Region", "read_catalog", "check_catalog", "summarize", "OVERRIDE_KEYS",
           "SPACING_METHODS", "COLUMNS"]

#: the columns the reader uses
COLUMNS = ("id", "group", "x", "y", "ra", "dec", "x_err", "y_err", "pos_err",
           "mass", "mass_err", "flux", "flux_err")
#: fewer clumps than this in a region: a warning that the constraint is weak
_WEAK = 4


@dataclass(frozen=True, eq=False)
class Region:
    """One region of a catalog, ready for the likelihood.

    Attributes
    ----------
    name : str
        The ``group`` value, or the file stem without a group column.
    source : str
        The catalog file.
    ids : tuple of str, length N
    x, y : Quantity [au], shape (N,)
        Deprojected disk-plane positions, in the sky orientation (x east-like,
        y north-like; see :mod:`infer.catalog.geometry`).
    spacings : Quantity [au], shape (E,)
        Minimum-spanning-tree edges (E = N - 1) or nearest-neighbour distances (E = N).
    spacing_errors : Quantity [au], shape (E,)
        Linear propagation of the position errors (zeros without them).
    spacing_pairs : ndarray of int, shape (E, 2)
        Indices into ``ids`` of the two ends of each spacing.
    masses, mass_errors : Quantity [solMass], shape (N,)
    meta : dict
        Resolved metadata (Quantity: distance, inclination, position_angle,
        center_ra/center_dec for RA/Dec positions, the dust settings when
        masses come from fluxes) and any other header keys, unchanged.
    warnings : tuple of str
    excluded : tuple of str
        ``"<id>: <reason>"`` for each row left out.
    spacing_method : str
        "mst" or "nearest".
    sky_x, sky_y : Quantity [au], shape (N,)
        Projected offsets on the sky (east, north) before deprojection.
    sky_x_err, sky_y_err : Quantity [au], shape (N,)
        Their errors (zeros without position errors).
    mass_from_flux : bool
        Whether the masses were computed from continuum fluxes.
    spacing_min : Quantity [au], shape (E,), or None
        Shortest disk-plane length the beam resolves along each spacing (metadata
        ``beam_major``, ``beam_minor``, ``beam_pa``; see :mod:`infer.catalog.limits`).
    beam_extent : Quantity [au], shape (E,), or None
        The beam's FWHM on the sky along each spacing.
    mass_limit : Quantity [solMass] or None
        Detection limit (``mass_limit``, or ``flux_limit`` through the dust settings).
    area : Quantity [au2] or None
        Searched area in the disk plane (``area``, deprojected).
    """

    name: str
    source: str
    ids: tuple[str, ...]
    x: u.Quantity
    y: u.Quantity
    spacings: u.Quantity
    spacing_errors: u.Quantity
    spacing_pairs: np.ndarray
    masses: u.Quantity
    mass_errors: u.Quantity
    meta: dict
    warnings: tuple[str, ...] = ()
    excluded: tuple[str, ...] = ()
    spacing_method: str = "mst"
    sky_x: u.Quantity | None = None
    sky_y: u.Quantity | None = None
    sky_x_err: u.Quantity | None = None
    sky_y_err: u.Quantity | None = None
    mass_from_flux: bool = False
    spacing_min: u.Quantity | None = None
    beam_extent: u.Quantity | None = None
    mass_limit: u.Quantity | None = None
    area: u.Quantity | None = None

    def __len__(self) -> int:
        return len(self.ids)

    @property
    def radii(self) -> u.Quantity:
        """Disk-plane distance of each clump from the star (the x, y origin), au (N,)."""
        return np.hypot(self.x.to_value(u.au), self.y.to_value(u.au)) * u.au


# ---------------------------------------------------------------- region ----

def _where(group: str | None) -> str:
    return f" for group {group!r}" if group is not None else ""


def _need_distance(src: str, meta: dict, why: str, group: str | None) -> u.Quantity:
    if "distance" not in meta:
        raise CatalogError(f"{src}: {why}, so the distance is needed{_where(group)}: add "
                           f"'distance' (e.g. '140 pc') to the file header or the run config "
                           f"[catalog] table")
    return meta["distance"]


def _sky_au(cells, vals, rows, meta, group) -> tuple[np.ndarray, np.ndarray]:
    src = cells.src
    if vals.pos_unit is None:
        ra, dec = (vals.pos[0][rows] * u.deg, vals.pos[1][rows] * u.deg)
        if ("center_ra" in meta) != ("center_dec" in meta):
            raise CatalogError(f"{src}: give both center_ra and center_dec, or neither "
                               f"(the mean position is then used){_where(group)}")
        if "center_ra" in meta:
            center = SkyCoord(meta["center_ra"], meta["center_dec"], frame="icrs")
        else:
            center = geometry.mean_position(SkyCoord(ra, dec, frame="icrs"))
            meta["center_ra"], meta["center_dec"] = center.ra.to(u.deg), center.dec.to(u.deg)
        east, north = geometry.sky_offsets(ra, dec, center=center)
        d = _need_distance(src, meta, "positions are ra/dec", group)
        return (geometry.angular_to_length(east, d).value,
                geometry.angular_to_length(north, d).value)
    x, y = vals.pos[0][rows] * vals.pos_unit, vals.pos[1][rows] * vals.pos_unit
    if is_kind(vals.pos_unit, "angle"):
        d = _need_distance(src, meta, f"positions x, y are angles ({vals.pos_unit})", group)
        return geometry.angular_to_length(x, d).value, geometry.angular_to_length(y, d).value
    return x.to_value(u.au), y.to_value(u.au)


def _sky_err_au(cells, vals, rows, meta, group) -> tuple[np.ndarray, np.ndarray]:
    if vals.err is None:
        return np.zeros(len(rows)), np.zeros(len(rows))
    ex, ey = vals.err[0][rows] * vals.err_unit, vals.err[1][rows] * vals.err_unit
    if is_kind(vals.err_unit, "angle"):
        d = _need_distance(cells.src, meta, f"position errors are angles ({vals.err_unit})", group)
        return geometry.angular_to_length(ex, d).value, geometry.angular_to_length(ey, d).value
    return ex.to_value(u.au), ey.to_value(u.au)


def _orientation(src: str, meta: dict, notes: list[str], group: str | None) -> np.ndarray:
    if "inclination" not in meta:
        notes.append("inclination not given: the positions are taken as face-on")
        meta["inclination"] = 0.0 * u.deg
    inc = meta["inclination"]
    if "position_angle" not in meta:
        if abs(np.cos(inc)) < 1.0 - 1e-12:
            raise CatalogError(f"{src}: the disk is inclined ({inc:g}) but no 'position_angle' "
                               f"of its major axis (east of north) is given{_where(group)}; add "
                               f"it to the file header or the run config [catalog] table")
        meta["position_angle"] = 0.0 * u.deg
    cos_i = abs(float(np.cos(inc)))
    if cos_i < np.cos(np.radians(89.0)):
        raise CatalogError(f"{src}: inclination {inc:g} is (nearly) edge-on{_where(group)}; "
                           f"positions cannot be deprojected")
    if cos_i < np.cos(np.radians(75.0)):
        notes.append(f"inclination {inc:g}: deprojection stretches the minor axis "
                     f"{1 / cos_i:.1f}x and its errors with it")
    return geometry.deprojection_matrix(inc, meta["position_angle"])


def _duplicates(cells: Cells, rows: np.ndarray, sx: np.ndarray, sy: np.ndarray) -> None:
    pts = np.column_stack([sx, sy])
    pts = pts / max(float(np.max(np.abs(pts))), 1e-300)   # squares neither overflow nor underflow
    scale = max(float(np.ptp(pts[:, 0]) + np.ptp(pts[:, 1])), 1e-300)
    # pairs closer than 1e-9 of the extent, found with a tree (no N^2 distance matrix)
    close = sorted(cKDTree(pts).query_pairs(1e-9 * scale))
    if close:
        i, j = rows[list(close[0])]
        ids = cells.ids
        raise CatalogError(f"{cells.src}: rows {i + 1} and {j + 1} (ids {ids[i]!r} and "
                           f"{ids[j]!r}) have the same position; remove the duplicate or "
                           f"correct the coordinates")


_RANGE_HINT = {
    "positions": "check the position and error units and the distance",
    "spacings": "check the position and error units and the distance",
    "masses": "check the mass or flux units and, for fluxes, the distance, wavelength, "
              "dust_temperature, dust_opacity and gas_to_dust",
}


def _representable(src: str, group: str | None, what: str, *arrays: np.ndarray,
                   positive: np.ndarray | None = None) -> None:
    """Refuse values that overflowed (or, for ``positive``, underflowed to 0) in conversion."""
    bad = not all(np.all(np.isfinite(a)) for a in arrays)
    if positive is not None:
        bad = bad or not np.all(positive > 0.0)
    if bad:
        raise CatalogError(f"{src}: the {what} are out of the floating-point range after unit "
                           f"conversion (infinite, NaN or 0){_where(group)}; {_RANGE_HINT[what]}")


def _region(cells, lay, vals, rows, name, group, overrides, spacing, excluded, notes):
    src = cells.src
    meta, extras, meta_notes = resolve_metadata(cells.raw.meta, overrides, source=src, group=group)
    notes = list(notes) + meta_notes
    n = len(rows)
    label = f"group {group!r}" if group is not None else "the catalog"
    if n < 2:
        raise CatalogError(f"{src}: {label} has {n} clump{'s' if n != 1 else ''} left; at "
                           f"least 2 are needed for a spacing")
    if n < _WEAK:
        notes.append(f"only {n} clumps: the spacings and masses constrain the conditions weakly")
    ids = [cells.ids[i] for i in rows]
    seen: dict[str, int] = {}
    for i in rows:
        key = cells.ids[i]
        if key in seen:
            raise CatalogError(f"{src}: column 'id': id {key!r} appears in rows {seen[key] + 1} "
                               f"and {i + 1}{_where(group)}; ids must be unique")
        seen[key] = i
    with np.errstate(over="ignore", invalid="ignore"):  # out-of-range values: refused below
        sx, sy = _sky_au(cells, vals, rows, meta, group)
        ex, ey = _sky_err_au(cells, vals, rows, meta, group)
    _representable(src, group, "positions", sx, sy, ex, ey)
    _duplicates(cells, rows, sx, sy)
    matrix = _orientation(src, meta, notes, group)
    with np.errstate(over="ignore", invalid="ignore"):
        dx, dy = geometry.deproject(sx * u.au, sy * u.au, inclination=meta["inclination"],
                                    position_angle=meta["position_angle"])
        sp = geometry.clump_spacings(dx, dy, method=spacing, x_err=ex * u.au, y_err=ey * u.au,
                                     matrix=matrix)
    _representable(src, group, "spacings", sp.lengths.value, sp.errors.value)
    amount = vals.amount[rows] * vals.amount_unit
    amount_err = (vals.amount_err[rows] if vals.amount_err is not None else np.zeros(n)) \
        * vals.amount_unit
    if lay.masses == "mass":
        with np.errstate(over="ignore", under="ignore"):
            masses, mass_err = amount.to(u.solMass), amount_err.to(u.solMass)
    else:
        d = _need_distance(src, meta, "masses come from fluxes", group)
        with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
            dust, dust_notes = dust_settings(meta, source=src)
            notes += dust_notes
            meta.update({k: v for k, v in dust.items() if v is not None})
            masses, mass_err = dust_mass(
                amount, distance=d, frequency=dust["frequency"],
                temperature=dust["dust_temperature"], opacity=dust["dust_opacity_observed"],
                gas_to_dust=dust["gas_to_dust"], flux_err=amount_err,
                temperature_err=dust["dust_temperature_err"],
                opacity_err=dust["dust_opacity_observed_err"])
    _representable(src, group, "masses", masses.value, mass_err.value, positive=masses.value)
    limits = selection_limits(meta, sky_x=sx * u.au, sky_y=sy * u.au, pairs=sp.pairs,
                              spacings=sp.lengths, masses=masses,
                              dust=dust if lay.masses != "mass" else None, source=src, group=group)
    notes += limits.notes
    meta.update({k: v for k, v in extras.items() if k not in meta})
    return Region(
        name=name, source=src, ids=tuple(ids), x=dx.to(u.au), y=dy.to(u.au),
        spacings=sp.lengths, spacing_errors=sp.errors, spacing_pairs=sp.pairs,
        masses=masses, mass_errors=mass_err, meta=meta, warnings=tuple(notes),
        excluded=tuple(excluded), spacing_method=spacing, sky_x=sx * u.au, sky_y=sy * u.au,
        sky_x_err=ex * u.au, sky_y_err=ey * u.au, mass_from_flux=lay.masses == "flux",
        spacing_min=limits.spacing_min, beam_extent=limits.beam_extent,
        mass_limit=limits.mass_limit, area=limits.area,
    )


def _check_overrides(src: str, overrides: Mapping[str, Any] | None) -> dict[str, Any]:
    if overrides is None:
        return {}
    if not isinstance(overrides, Mapping):
        raise CatalogError(f"{src}: catalog overrides must be a table of key = value")
    out = {}
    for key, value in overrides.items():
        k = str(key).strip().lower()
        if k not in OVERRIDE_KEYS:
            raise CatalogError(f"run config [catalog]: unknown key {key!r}; known keys are "
                               f"{', '.join(OVERRIDE_KEYS)}")
        out[k] = value
    return out


def _exclusions(cells: Cells, wanted: Any) -> dict[int, str]:
    if wanted is None:
        return {}
    if isinstance(wanted, str) or not isinstance(wanted, (list, tuple)):
        raise CatalogError("run config [catalog]: 'exclude' must be a list of clump ids, "
                           "e.g. exclude = [\"c7\"]")
    out: dict[int, str] = {}
    for item in wanted:
        hits = [i for i, v in enumerate(cells.ids) if v == str(item).strip()]
        if not hits:
            raise CatalogError(f"run config [catalog]: 'exclude' names id {item!r}, which is not "
                               f"in {cells.src}")
        for i in hits:
            out[i] = f"{cells.ids[i]}: excluded by the run config"
    return out


def read_catalog(path: str | Path, *, overrides: Mapping[str, Any] | None = None,
                 spacing: str = "mst") -> list[Region]:
    """Read and validate a clump catalog; one :class:`Region` per group.

    Parameters
    ----------
    path : str or Path
        ECSV (preferred), CSV, FITS or VOTable file.
    overrides : mapping, optional
        The run config's ``[catalog]`` table: metadata (``distance = "140 pc"``,
        ``inclination``, ``position_angle``, ``center_ra``, ``center_dec``,
        ``wavelength`` or ``frequency``, ``dust_temperature``(``_err``),
        ``dust_opacity``(``_err``), ``opacity_wavelength``, ``opacity_index``,
        ``gas_to_dust``), ``units`` (column -> unit for files without units) and
        ``exclude`` (list of ids). Overrides take precedence over the file's
        header; a warning says so when they disagree.
    spacing : {"mst", "nearest"}
        Minimum-spanning-tree edges or nearest-neighbour distances.

    Returns
    -------
    list of Region
        In order of first appearance of each group.

    Raises
    ------
    CatalogError
        (a ValueError) naming the file, row, id and column, and what to fix.
    """
    src = str(path)
    if spacing not in SPACING_METHODS:
        raise CatalogError(f"spacing: must be one of {', '.join(SPACING_METHODS)}, got {spacing!r}")
    ov = _check_overrides(src, overrides)
    raw = read_table(path, units=ov.get("units"))
    lay = column_layout(raw)
    cells = Cells(raw)
    cells.ids = cells.text("id")
    vals = column_values(cells, lay)
    excluded = _exclusions(cells, ov.get("exclude"))
    notes = list(raw.warnings) + lay.notes
    if "group" in raw.columns:
        labels = cells.text("group")
        order = list(dict.fromkeys(labels))
        groups = [(g, g, np.array([i for i, v in enumerate(labels) if v == g])) for g in order]
    else:
        groups = [(Path(src).stem, None, np.arange(raw.n_rows))]
    regions = []
    for name, group, rows in groups:
        keep = np.array([i for i in rows if i not in excluded], dtype=int)
        dropped = [excluded[i] for i in rows if i in excluded]
        regions.append(_region(cells, lay, vals, keep, name, group, ov, spacing, dropped, notes))
    return regions


def check_catalog(path: str | Path, *, overrides: Mapping[str, Any] | None = None,
                  spacing: str = "mst") -> dict[str, Any]:
    """Read a catalog and return its ``infer check --json`` summary.

    Parameters are those of :func:`read_catalog`; see :func:`summarize` for the keys.
    """
    return summarize(read_catalog(path, overrides=overrides, spacing=spacing))


"""How a catalog was observed: the beam, the detection limit and the searched area.

From the metadata keys ``beam_major``, ``beam_minor`` (FWHM angles), ``beam_pa`` (east of
north), ``mass_limit`` (a mass) or ``flux_limit`` (a flux density, turned into a mass with the
catalog's dust settings) and ``area`` (the searched region on the sky: a solid angle or a
projected area), :func:`selection_limits` works out what the likelihood needs:

* for each spacing, the shortest disk-plane length that the beam could have resolved along that
  edge's direction on the sky. Two clumps are taken as resolved when their sky separation
  exceeds the beam's FWHM along the line joining them (common practice: the FWHM criterion).
  For an elliptical Gaussian beam with FWHM a (major), b (minor) and position angle PA, the FWHM
  along a sky direction at position angle phi is the radius of the ellipse,
  ``1 / sqrt(cos^2(phi - PA) / a^2 + sin^2(phi - PA) / b^2)``; the sky minimum becomes a
  disk-plane minimum with the edge's own deprojection factor,
  ``s_min = s_disk * (beam extent / s_sky)``;
* the detection limit as a mass;
* the searched area deprojected onto the disk plane (divided by |cos i|).

Catalog entries that the selection says could not have been observed (a spacing shorter than
the beam along it, a mass below the limit) are reported; when every spacing or every mass is
such, the metadata are refused as inconsistent with the catalog.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import astropy.units as u
import numpy as np

from ..errors import CatalogError
from .dustmass import dust_mass
from .geometry import angular_to_length

__all__ = ["SelectionLimits", "beam_fwhm_along", "edge_resolution", "selection_limits",
           "SELECTION_KEYS"]

#: the metadata keys read here
SELECTION_KEYS = ("beam_major", "beam_minor", "beam_pa", "mass_limit", "flux_limit", "area")


@dataclass(frozen=True, eq=False)
class SelectionLimits:
    """The selection of one region, ready for the likelihood.

    Attributes
    ----------
    spacing_min : Quantity [au], shape (E,), or None
        Shortest resolvable disk-plane length along each spacing (None without a beam).
    beam_extent : Quantity [au], shape (E,), or None
        The beam's FWHM on the sky along each spacing.
    mass_limit : Quantity [solMass] or None
        Detection limit as a mass.
    area : Quantity [au2] or None
        Searched area in the disk plane.
    notes : list of str
        Warnings for ``infer check`` and the fit (entries below the limits, assumptions).
    """

    spacing_min: u.Quantity | None = None
    beam_extent: u.Quantity | None = None
    mass_limit: u.Quantity | None = None
    area: u.Quantity | None = None
    notes: list = field(default_factory=list)


def beam_fwhm_along(direction: u.Quantity, *, major: u.Quantity, minor: u.Quantity,
                    pa: u.Quantity) -> u.Quantity:
    """FWHM of an elliptical Gaussian beam along sky directions.

    Parameters
    ----------
    direction : Quantity [angle], shape (E,)
        Position angles (east of north) of the directions.
    major, minor : Quantity [angle]
        FWHM along the major and minor axes.
    pa : Quantity [angle]
        Position angle of the major axis, east of north.

    Returns
    -------
    Quantity, unit of ``major``, shape (E,)
        The radius of the half-maximum ellipse along each direction.
    """
    d = (u.Quantity(direction) - u.Quantity(pa)).to_value(u.rad)
    a = u.Quantity(major)
    b = u.Quantity(minor).to_value(a.unit)
    av = a.value
    return (1.0 / np.sqrt((np.cos(d) / av) ** 2 + (np.sin(d) / b) ** 2)) * a.unit


def edge_resolution(sky_x: u.Quantity, sky_y: u.Quantity, pairs: np.ndarray, spacings: u.Quantity,
                    *, major: u.Quantity, minor: u.Quantity, pa: u.Quantity,
                    distance: u.Quantity) -> tuple[u.Quantity, u.Quantity]:
    """Beam FWHM on the sky along each edge and the shortest resolvable disk-plane length.

    Parameters
    ----------
    sky_x, sky_y : Quantity [length], shape (N,)
        Projected offsets on the sky (east, north).
    pairs : ndarray of int, shape (E, 2)
        The two clumps of each edge.
    spacings : Quantity [length], shape (E,)
        Deprojected (disk-plane) edge lengths.
    major, minor, pa : Quantity [angle]
        The beam (see :func:`beam_fwhm_along`).
    distance : Quantity [length]

    Returns
    -------
    extent_sky : Quantity [au], shape (E,)
    spacing_min : Quantity [au], shape (E,)
        ``spacings * extent_sky / s_sky``.
    """
    sx = u.Quantity(sky_x).to_value(u.au)
    sy = u.Quantity(sky_y).to_value(u.au)
    pairs = np.asarray(pairs, dtype=int).reshape(-1, 2)
    east = sx[pairs[:, 1]] - sx[pairs[:, 0]]
    north = sy[pairs[:, 1]] - sy[pairs[:, 0]]
    phi = np.arctan2(east, north) * u.rad
    extent = angular_to_length(beam_fwhm_along(phi, major=major, minor=minor, pa=pa), distance)
    s_sky = np.hypot(east, north)
    s_disk = u.Quantity(spacings).to_value(u.au)
    return extent.to(u.au), (s_disk * extent.to_value(u.au) / s_sky) * u.au


def _beam(meta: Mapping[str, Any], src: str, where: str, notes: list[str]):
    major, minor, pa = meta.get("beam_major"), meta.get("beam_minor"), meta.get("beam_pa")
    if major is None:
        if minor is not None or pa is not None:
            key = "beam_minor" if minor is not None else "beam_pa"
            raise CatalogError(f"{src}: metadata {key!r} is given without 'beam_major'{where}; "
                               f"give the beam's major-axis FWHM (e.g. '0.12 arcsec') too")
        return None
    if minor is None:
        minor = major
        notes.append(f"beam_minor not given: a circular beam of FWHM {major:.4g} is assumed")
    if minor > major * (1 + 1e-9):
        raise CatalogError(f"{src}: metadata 'beam_minor' ({minor:.4g}) exceeds 'beam_major' "
                           f"({major:.4g}){where}; the major axis is the longer one: swap them")
    if pa is None:
        pa = 0.0 * u.deg
        if minor < major * (1 - 1e-9):
            notes.append("beam_pa not given: the beam's major axis is taken along north-south "
                         "(0 deg)")
    if "distance" not in meta:
        raise CatalogError(f"{src}: a beam (angle) is given, so the distance is needed{where}: "
                           f"add 'distance' (e.g. '140 pc') to the file header or the run config "
                           f"[catalog] table")
    return major, minor, pa


def _mass_limit(meta: Mapping[str, Any], src: str, where: str, dust: Mapping[str, Any] | None,
                notes: list[str]) -> u.Quantity | None:
    if "mass_limit" in meta and "flux_limit" in meta:
        raise CatalogError(f"{src}: metadata 'mass_limit' and 'flux_limit' are both given{where}; "
                           f"give one detection limit")
    if "mass_limit" in meta:
        return u.Quantity(meta["mass_limit"]).to(u.solMass)
    if "flux_limit" not in meta:
        return None
    if dust is None:
        from .metadata import dust_settings

        try:
            dust, dust_notes = dust_settings(meta, source=src)
        except CatalogError as exc:
            text = str(exc).replace("masses come from fluxes", "'flux_limit' is a flux density")
            raise CatalogError(f"{text} (to turn 'flux_limit' into a mass limit; or give "
                               f"'mass_limit' instead)") from None
        notes += [f"flux_limit: {n}" for n in dust_notes]
    if "distance" not in meta:
        raise CatalogError(f"{src}: 'flux_limit' is given, so the distance is needed{where} to "
                           f"turn it into a mass limit")
    limit, _ = dust_mass(meta["flux_limit"], distance=meta["distance"],
                         frequency=dust["frequency"], temperature=dust["dust_temperature"],
                         opacity=dust["dust_opacity_observed"], gas_to_dust=dust["gas_to_dust"])
    limit = u.Quantity(limit).reshape(()).to(u.solMass)
    notes.append(f"flux_limit {meta['flux_limit']:.4g} is a mass limit of "
                 f"{limit.to(u.M_jup):.4g} with the catalog's dust settings")
    return limit


def _area(meta: Mapping[str, Any], src: str, where: str) -> u.Quantity | None:
    if "area" not in meta:
        return None
    a = u.Quantity(meta["area"])
    if a.unit.is_equivalent(u.arcsec**2):
        if "distance" not in meta:
            raise CatalogError(f"{src}: 'area' is a solid angle, so the distance is needed{where}")
        d_au = u.Quantity(meta["distance"]).to_value(u.pc)       # 1 arcsec at 1 pc is 1 au
        sky = a.to_value(u.arcsec**2) * d_au**2 * u.au**2
    else:
        sky = a.to(u.au**2)
    cos_i = abs(float(np.cos(u.Quantity(meta.get("inclination", 0 * u.deg)).to_value(u.rad))))
    return sky / cos_i


def selection_limits(meta: Mapping[str, Any], *, sky_x: u.Quantity, sky_y: u.Quantity,
                     pairs: np.ndarray, spacings: u.Quantity, masses: u.Quantity,
                     dust: Mapping[str, Any] | None, source: str,
                     group: str | None = None) -> SelectionLimits:
    """The beam, detection limit and area of one region (see the module docstring).

    Parameters
    ----------
    meta : mapping
        Resolved metadata (:func:`infer.catalog.metadata.resolve_metadata`, with the
        inclination set).
    sky_x, sky_y : Quantity [au], shape (N,)
        Projected offsets (east, north).
    pairs : ndarray (E, 2)
    spacings : Quantity [au], shape (E,)
        Disk-plane spacings.
    masses : Quantity [mass], shape (N,)
    dust : mapping or None
        The dust settings when the masses came from fluxes.
    source : str
        File name, for messages.
    group : str, optional

    Raises
    ------
    CatalogError
        A beam without its major axis, a minor axis above the major, a beam or flux limit
        without the distance, both limits, a beam larger than every spacing, or a limit above
        every mass.
    """
    where = f" for group {group!r}" if group is not None else ""
    notes: list[str] = []
    out: dict[str, Any] = {}
    beam = _beam(meta, source, where, notes)
    if beam is not None:
        major, minor, pa = beam
        extent, s_min = edge_resolution(sky_x, sky_y, pairs, spacings, major=major, minor=minor,
                                        pa=pa, distance=meta["distance"])
        below = np.asarray(u.Quantity(spacings).to_value(u.au) <= s_min.to_value(u.au))
        text = f"beam_major {major:.4g}, beam_minor {minor:.4g}, beam_pa {pa:.4g}"
        if below.all():
            raise CatalogError(f"{source}: the beam ({text}) is larger than every spacing along it"
                               f"{where}: no pair of these clumps could have been resolved. Check "
                               f"'beam_major' and 'beam_minor' (FWHM angles, e.g. '0.12 arcsec'), "
                               f"their unit and the distance")
        if below.any():
            notes.append(f"{int(below.sum())} of {below.size} spacings are shorter than the beam "
                         f"along them ({text}); they are kept, without a truncation in the "
                         f"likelihood, but the beam may be mis-stated")
        out.update(spacing_min=s_min, beam_extent=extent)
    limit = _mass_limit(meta, source, where, dust, notes)
    if limit is not None:
        m = u.Quantity(masses).to_value(u.solMass)
        below = m <= limit.to_value(u.solMass)
        key = "mass_limit" if "mass_limit" in meta else "flux_limit"
        if below.all():
            raise CatalogError(f"{source}: the detection limit ({key} = {meta[key]:.4g}, a mass "
                               f"of {limit.to(u.M_jup):.4g}) is above every mass in the catalog"
                               f"{where}; check '{key}' and its unit")
        if below.any():
            notes.append(f"{int(below.sum())} of {below.size} masses are at or below the "
                         f"detection limit ({key} = {meta[key]:.4g}, {limit.to(u.M_jup):.4g}); "
                         f"they are kept, without a truncation in the likelihood")
        out["mass_limit"] = limit
    area = _area(meta, source, where)
    if area is not None:
        out["area"] = area
    return SelectionLimits(notes=notes, **out)

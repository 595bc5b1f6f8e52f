"""The ``infer check --json`` summary of a catalog's regions.

Part of :mod:`infer.catalog.regions`: statistics of spacings and masses, warnings and
exclusions, as plain JSON-ready values. Lengths, masses and areas are given in the units of
the registry's ``spacing``, ``clump_mass`` and ``area`` (:mod:`infer.quantities`: au,
Jupiter masses, au2), each key ending in its unit (``spacing_median_au``).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import astropy.units as u
import numpy as np

from ..quantities import QUANTITIES, QuantityInfo

if TYPE_CHECKING:
    from .regions import Region

__all__ = ["summarize"]

_LENGTH, _MASS, _AREA = QUANTITIES["spacing"], QUANTITIES["clump_mass"], QUANTITIES["area"]


def _stats(values: np.ndarray, q: QuantityInfo, stem: str) -> dict[str, float | None]:
    """Median, 16th and 84th percentiles, min and max of ``values`` (in the unit of ``q``)."""
    v = np.asarray(values, dtype=float)
    keys = ("median", "p16", "p84", "min", "max")
    if v.size == 0:
        return {q.key(f"{stem}_{k}"): None for k in keys}
    nums = (np.median(v), *np.percentile(v, [16, 84]), v.min(), v.max())
    return {q.key(f"{stem}_{k}"): float(x) for k, x in zip(keys, nums, strict=True)}


def _in(value: u.Quantity, q: QuantityInfo) -> np.ndarray:
    return value.to_value(q.astropy_unit)


def _jsonable(value: Any) -> Any:
    if isinstance(value, u.Quantity):
        if value.isscalar:
            return f"{value.value:.6g} {value.unit.to_string()}".strip()
        return [_jsonable(v) for v in value]
    if isinstance(value, Mapping):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_jsonable(v) for v in value]
    if isinstance(value, (np.floating, float)):
        return float(value) if np.isfinite(value) else str(value)
    if isinstance(value, (np.integer, np.bool_)):
        return value.item()
    if value is None or isinstance(value, (str, int, bool)):
        return value
    return str(value)


def _selection(r: Region, sp: np.ndarray, m: np.ndarray) -> dict[str, Any]:
    """Beam, detection limit and area, and how many catalog entries fall below the limits."""
    meta = r.meta
    out: dict[str, Any] = {"beam": None, _LENGTH.key("beam_extent"): None,
                           _LENGTH.key("resolvable"): None, "spacings_below_beam": None,
                           _MASS.key("mass_limit"): None, "masses_below_limit": None,
                           _AREA.key(): None}
    if r.spacing_min is not None:
        minor = meta.get("beam_minor", meta["beam_major"])
        out["beam"] = {"major_arcsec": float(meta["beam_major"].to_value(u.arcsec)),
                       "minor_arcsec": float(minor.to_value(u.arcsec)),
                       "pa_deg": float(meta.get("beam_pa", 0 * u.deg).to_value(u.deg))}
        smin = _in(r.spacing_min, _LENGTH)
        out[_LENGTH.key("beam_extent")] = _in(r.beam_extent, _LENGTH).tolist()
        out[_LENGTH.key("resolvable")] = smin.tolist()
        out["spacings_below_beam"] = int(np.sum(sp <= smin))
    if r.mass_limit is not None:
        lim = float(_in(r.mass_limit, _MASS))
        out[_MASS.key("mass_limit")] = lim
        out["masses_below_limit"] = int(np.sum(m <= lim))
    if r.area is not None:
        out[_AREA.key()] = float(_in(r.area, _AREA))
    return out


def _region_summary(r: Region) -> dict[str, Any]:
    sp = _in(r.spacings, _LENGTH)
    m = _in(r.masses, _MASS)
    out: dict[str, Any] = {"name": r.name, "n_clumps": len(r), "ids": list(r.ids),
                           "spacing_method": r.spacing_method, "spacing_count": int(sp.size)}
    out.update(_stats(sp, _LENGTH, "spacing"))
    out[_LENGTH.key("spacings")] = sp.tolist()
    out[_LENGTH.key("spacing_errors")] = _in(r.spacing_errors, _LENGTH).tolist()
    out["spacing_pairs"] = [[r.ids[i], r.ids[j]] for i, j in r.spacing_pairs]
    out.update(_stats(m, _MASS, "mass"))
    out[_MASS.key("masses")] = m.tolist()
    out[_MASS.key("mass_errors")] = _in(r.mass_errors, _MASS).tolist()
    out["mass_from_flux"] = r.mass_from_flux
    out.update(_selection(r, sp, m))
    out["metadata"] = _jsonable(r.meta)
    out["warnings"] = list(r.warnings)
    out["excluded"] = list(r.excluded)
    return out


def summarize(regions: list[Region]) -> dict[str, Any]:
    """The ``infer check --json`` object for regions of one catalog.

    Keys: ``n_clumps``, ``spacing_count``, ``spacing_median_au`` (and
    ``_p16_``, ``_p84_``, ``_min_``, ``_max_``), ``spacings_au``,
    ``spacing_errors_au``, ``mass_median_mjup`` (and the same statistics),
    ``masses_mjup``, ``mass_errors_mjup``, ``warnings``, ``excluded``,
    ``file``, ``n_regions``; with one region also ``ids``, ``metadata`` and the
    other per-region keys; with several, ``regions`` (a list of per-region
    objects) and the pooled statistics at the top level.
    """
    per = [_region_summary(r) for r in regions]
    if len(per) == 1:
        out = {"file": regions[0].source, "n_regions": 1, **per[0]}
        return out
    common = [w for w in regions[0].warnings if all(w in r.warnings for r in regions)]
    warnings = common + [f"[{r.name}] {w}" for r in regions for w in r.warnings if w not in common]
    sp = np.concatenate([_in(r.spacings, _LENGTH) for r in regions])
    m = np.concatenate([_in(r.masses, _MASS) for r in regions])
    out = {"file": regions[0].source, "n_regions": len(regions),
           "n_clumps": int(sum(len(r) for r in regions)),
           "spacing_method": regions[0].spacing_method, "spacing_count": int(sp.size)}
    out.update(_stats(sp, _LENGTH, "spacing"))
    out[_LENGTH.key("spacings")] = sp.tolist()
    errs = _LENGTH.key("spacing_errors")
    out[errs] = [e for p in per for e in p[errs]]
    out.update(_stats(m, _MASS, "mass"))
    out[_MASS.key("masses")] = m.tolist()
    errs = _MASS.key("mass_errors")
    out[errs] = [e for p in per for e in p[errs]]
    out["warnings"] = warnings
    out["excluded"] = [f"[{r.name}] {x}" for r in regions for x in r.excluded]
    out["regions"] = per
    return out

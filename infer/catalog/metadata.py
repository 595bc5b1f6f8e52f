"""Catalog metadata: header values and run-config overrides -> checked Quantities.

Sources, lowest precedence first: the file header; the header's per-group
table ``groups: {<group>: {...}}``; the run config's ``[catalog]`` table
(``overrides``). When an override disagrees with the file, the override wins
and a warning says so. Values are strings with units (``"140 pc"``,
``"35 deg"``), Quantities, or plain numbers for the dimensionless keys
(``gas_to_dust``, ``opacity_index``) and for ``center_ra`` / ``center_dec``
(degrees; sexagesimal strings such as ``"12h30m00s"`` work too). Header keys
that are not metadata are kept as extras (e.g. a demo's true parameters).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import astropy.units as u
import numpy as np
from astropy.coordinates import Angle

from ..errors import CatalogError, InferError
from ..units import parse_quantity
from . import dustmass

__all__ = ["META_UNITS", "OVERRIDE_KEYS", "resolve_metadata", "dust_settings"]

#: metadata key -> canonical unit (dimensionless keys are stored as float)
META_UNITS: dict[str, u.UnitBase] = {
    "distance": u.pc,
    "inclination": u.deg,
    "position_angle": u.deg,
    "center_ra": u.deg,
    "center_dec": u.deg,
    "wavelength": u.mm,
    "frequency": u.GHz,
    "dust_temperature": u.K,
    "dust_temperature_err": u.K,
    "dust_opacity": u.cm**2 / u.g,
    "dust_opacity_err": u.cm**2 / u.g,
    "opacity_wavelength": u.mm,
    "opacity_index": u.dimensionless_unscaled,
    "gas_to_dust": u.dimensionless_unscaled,
    # how the catalog was observed (selection): beam FWHM and orientation, detection limit,
    # searched area (a solid angle or a projected area on the sky)
    "beam_major": u.arcsec,
    "beam_minor": u.arcsec,
    "beam_pa": u.deg,
    "mass_limit": u.solMass,
    "flux_limit": u.mJy,
    "area": u.arcsec**2,
}
#: keys accepted in the run config's [catalog] table
OVERRIDE_KEYS: tuple[str, ...] = (*META_UNITS, "units", "exclude")

_SPECTRAL = {"wavelength", "frequency", "opacity_wavelength"}
_POSITIVE = {"distance", "wavelength", "frequency", "dust_temperature", "dust_opacity",
             "opacity_wavelength", "gas_to_dust", "beam_major", "beam_minor", "mass_limit",
             "flux_limit", "area"}
_NON_NEGATIVE = {"dust_temperature_err", "dust_opacity_err"}
_EXAMPLE = {"distance": "'140 pc'", "inclination": "'35 deg'", "position_angle": "'120 deg'",
            "center_ra": "'83.1 deg'", "center_dec": "'-5.4 deg'", "wavelength": "'1.3 mm'",
            "frequency": "'230 GHz'", "dust_temperature": "'20 K'", "dust_temperature_err": "'3 K'",
            "dust_opacity": "'0.9 cm2/g'", "dust_opacity_err": "'0.2 cm2/g'",
            "opacity_wavelength": "'1.3 mm'", "opacity_index": "1.8", "gas_to_dust": "100",
            "beam_major": "'0.12 arcsec'", "beam_minor": "'0.09 arcsec'", "beam_pa": "'25 deg'",
            "mass_limit": "'10 jupiterMass'", "flux_limit": "'0.5 mJy'",
            "area": "'4 arcsec2' (or a projected area such as '5e5 au2')"}


def _parse(key: str, value: Any, *, source: str, where: str) -> Any:
    unit = META_UNITS[key]
    label = f"{source}: metadata {key!r} ({where})"
    if isinstance(value, bool) or not isinstance(value, (str, int, float, u.Quantity, np.number)):
        raise CatalogError(f"{label}: expected a value such as {_EXAMPLE[key]}, got "
                           f"{type(value).__name__} {value!r}"[:300])
    try:
        if key in ("center_ra", "center_dec"):
            q = Angle(value, unit=u.deg) if not isinstance(value, u.Quantity) else Angle(value)
            out: Any = u.Quantity(q.to(u.deg))
        elif key == "area":
            out = _area(value, label)
        elif unit == u.dimensionless_unscaled:
            out = float(value.to_value(unit) if isinstance(value, u.Quantity) else value)
        else:
            if isinstance(value, (int, float, np.number)):
                raise CatalogError(f"{label}: {value!r} has no unit; give e.g. {_EXAMPLE[key]}")
            if key in _SPECTRAL:
                q = u.Quantity(value)
                if q.unit == u.dimensionless_unscaled:
                    raise CatalogError(f"{label}: {value!r} has no unit; give e.g. {_EXAMPLE[key]}")
                out = q.to(unit, equivalencies=u.spectral())
            else:
                out = parse_quantity(value, name=key, unit=unit)
    except CatalogError:
        raise
    except (InferError, ValueError, TypeError, u.UnitsError) as exc:
        raise CatalogError(f"{label}: cannot use {value!r} ({' '.join(str(exc).split())}); "
                           f"give e.g. {_EXAMPLE[key]}"[:400]) from None
    v = np.asarray(out.value if isinstance(out, u.Quantity) else out, dtype=float)
    if v.ndim != 0 or not np.isfinite(v):
        raise CatalogError(f"{label}: must be one finite value, got {value!r}")
    if key in _POSITIVE and v <= 0 or key in _NON_NEGATIVE and v < 0:
        raise CatalogError(f"{label}: must be {'positive' if key in _POSITIVE else '>= 0'}, "
                           f"got {value!r}")
    if key == "center_dec" and abs(v) > 90:
        raise CatalogError(f"{label}: a declination must lie between -90 and 90 deg")
    if key == "inclination" and not 0 <= v <= 180:
        raise CatalogError(f"{label}: must lie between 0 deg (face-on) and 180 deg, got {value!r}")
    return out


def _area(value: Any, label: str) -> u.Quantity:
    """A searched area: a solid angle (kept in arcsec2) or a projected area (kept in au2)."""
    if isinstance(value, (int, float, np.number)):
        raise CatalogError(f"{label}: {value!r} has no unit; give e.g. {_EXAMPLE['area']}")
    try:
        q = u.Quantity(value)
    except (TypeError, ValueError):
        raise CatalogError(f"{label}: cannot read {value!r}; give e.g. {_EXAMPLE['area']}") from None
    for target in (u.arcsec**2, u.au**2):
        if q.unit.is_equivalent(target):
            return q.to(target)
    raise CatalogError(f"{label}: {value!r} is neither a solid angle nor an area; give e.g. "
                       f"{_EXAMPLE['area']}")


def _same(a: Any, b: Any) -> bool:
    va = a.value if isinstance(a, u.Quantity) else a
    vb = b.value if isinstance(b, u.Quantity) else b
    return bool(np.isclose(va, vb, rtol=1e-9, atol=0.0))


def _text(v: Any) -> str:
    return f"{v:.6g}" if isinstance(v, u.Quantity) or isinstance(v, float) else str(v)


def resolve_metadata(
    header: Mapping[str, Any],
    overrides: Mapping[str, Any] | None,
    *,
    source: str,
    group: str | None = None,
) -> tuple[dict[str, Any], dict[str, Any], list[str]]:
    """Merge header metadata, per-group header metadata and overrides.

    Parameters
    ----------
    header : mapping
        File header metadata with lower-case keys.
    overrides : mapping, optional
        The run config's [catalog] table (keys from :data:`OVERRIDE_KEYS`).
    source : str
        File name, for messages.
    group : str, optional
        Region name, to pick its entry of the header's ``groups`` table.

    Returns
    -------
    meta : dict
        Known keys as Quantity in the units of :data:`META_UNITS` (floats for
        dimensionless keys); only keys that were given.
    extras : dict
        Other header keys, unchanged.
    warnings : list of str
    """
    notes: list[str] = []
    meta: dict[str, Any] = {}
    extras: dict[str, Any] = {}
    layers: list[tuple[str, Mapping[str, Any]]] = [("file header", header)]
    groups = header.get("groups")
    if group is not None and groups is not None:
        if not isinstance(groups, Mapping):
            raise CatalogError(f"{source}: header 'groups' must map each group name to its "
                               f"metadata, e.g. groups: {{A: {{inclination: 30 deg}}}}")
        entry = {str(k).strip(): v for k, v in groups.items()}.get(str(group))
        if entry is not None:
            if not isinstance(entry, Mapping):
                raise CatalogError(f"{source}: header 'groups' entry {group!r} must be a table "
                                   f"of metadata")
            layers.append((f"file header, group {group!r}", entry))
    for where, layer in layers:
        for key, value in layer.items():
            k = str(key).strip().lower()
            if k in META_UNITS:
                meta[k] = _parse(k, value, source=source, where=where)
            elif k != "groups" or group is None:
                extras[k] = value
    given = set(overrides or {})
    for key, other in (("wavelength", "frequency"), ("frequency", "wavelength")):
        if key in given and other not in given and other in meta:
            del meta[other]                  # the run config's band replaces the file's
    for key, value in (overrides or {}).items():
        if key not in META_UNITS:
            continue
        new = _parse(key, value, source=source, where="run config [catalog]")
        if key in meta and not _same(meta[key], new):
            notes.append(f"{key}: the run config gives {_text(new)}, the file {_text(meta[key])}; "
                         f"using the run config value")
        meta[key] = new
    return meta, extras, notes


def dust_settings(meta: Mapping[str, Any], *, source: str) -> tuple[dict[str, Any], list[str]]:
    """Resolve the dust settings needed to turn fluxes into masses.

    Parameters
    ----------
    meta : mapping
        Output of :func:`resolve_metadata`.
    source : str
        File name, for messages.

    Returns
    -------
    settings : dict
        ``frequency`` [GHz], ``wavelength`` [mm], ``dust_temperature`` [K],
        ``dust_temperature_err`` [K] (0 if not given), ``dust_opacity`` [cm2/g]
        as given or the default, ``opacity_wavelength`` [mm] or None,
        ``opacity_index``, ``dust_opacity_observed`` and
        ``dust_opacity_observed_err`` [cm2/g] at the observing frequency, and
        ``gas_to_dust``.
    warnings : list of str
        One per default used.

    Raises
    ------
    CatalogError
        When the observing wavelength or the dust temperature is missing, or
        ``wavelength`` and ``frequency`` disagree.
    """
    where = "in the file header or the run config [catalog] table"
    notes: list[str] = []
    wav, freq = meta.get("wavelength"), meta.get("frequency")
    if wav is None and freq is None:
        raise CatalogError(f"{source}: masses come from fluxes, so give the observing "
                           f"'wavelength' (e.g. '1.3 mm') or 'frequency' {where}")
    if wav is not None and freq is not None:
        if not np.isclose(wav.to_value(u.GHz, equivalencies=u.spectral()), freq.value, rtol=1e-3):
            raise CatalogError(f"{source}: metadata 'wavelength' {wav:.4g} and 'frequency' "
                               f"{freq:.4g} disagree; give one of them")
    if freq is None:
        freq = wav.to(u.GHz, equivalencies=u.spectral())
    wav = freq.to(u.mm, equivalencies=u.spectral())
    if "dust_temperature" not in meta:
        raise CatalogError(f"{source}: masses come from fluxes, so give 'dust_temperature' "
                           f"(e.g. '20 K') {where}")
    index = meta.get("opacity_index")
    if "dust_opacity" in meta:
        kappa0 = meta["dust_opacity"]
        ref = meta.get("opacity_wavelength")
        if ref is None and index is not None:
            notes.append("opacity_index is not used: without opacity_wavelength the "
                         "dust_opacity is taken at the observing wavelength")
        if ref is not None and index is None:
            index = dustmass.DEFAULT_OPACITY_INDEX
            notes.append(f"opacity_index not given: scaling dust_opacity from "
                         f"{ref:.4g} with beta = {index} (default)")
    else:
        kappa0 = dustmass.DEFAULT_OPACITY
        ref = dustmass.DEFAULT_OPACITY_WAVELENGTH
        if index is None:
            index = dustmass.DEFAULT_OPACITY_INDEX
        scaled = "" if np.isclose(wav.to_value(u.mm), ref.to_value(u.mm), rtol=1e-6) else \
            f", scaled to {wav:.4g} with beta = {index:g}"
        notes.append(f"dust_opacity not given: using the default {kappa0:.4g} of dust at "
                     f"{ref:.4g}{scaled} (see the README)")
    kappa = dustmass.dust_opacity(freq, opacity=kappa0, reference=ref,
                                  index=index if index is not None else 0.0)
    kappa_err = meta.get("dust_opacity_err", 0.0 * u.cm**2 / u.g) * (kappa / kappa0)
    g = meta.get("gas_to_dust")
    if g is None:
        g = dustmass.DEFAULT_GAS_TO_DUST
        notes.append(f"gas_to_dust not given: using {g:g} (default)")
    settings = {
        "frequency": freq, "wavelength": wav,
        "dust_temperature": meta["dust_temperature"],
        "dust_temperature_err": meta.get("dust_temperature_err", 0.0 * u.K),
        "dust_opacity": kappa0, "opacity_wavelength": ref,
        "opacity_index": None if index is None else float(index),
        "dust_opacity_observed": u.Quantity(kappa).reshape(()),
        "dust_opacity_observed_err": u.Quantity(kappa_err).reshape(()),
        "gas_to_dust": float(g),
    }
    return settings, notes

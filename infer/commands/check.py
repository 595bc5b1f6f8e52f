"""``infer check``: read and validate a clump catalog; spacing and mass statistics."""

from __future__ import annotations

import argparse
import json
import tomllib
from pathlib import Path
from typing import Any

from ..catalog.regions import SPACING_METHODS, check_catalog
from ..errors import ConfigError
from ..quantities import QUANTITIES, QuantityInfo

__all__ = ["add_arguments", "run", "format_text"]


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("catalog", metavar="CATALOG",
                        help="clump catalog (.ecsv preferred; .csv, .fits, .xml VOTable)")
    parser.add_argument("--config", metavar="RUN.toml", default=None,
                        help="run config: its [catalog] table overrides the file's metadata, "
                             "its [model] spacing sets the spacing method")
    parser.add_argument("--spacing", choices=list(SPACING_METHODS), default=None,
                        help="minimum-spanning-tree edges (mst, default) or nearest-neighbour "
                             "distances (nearest)")
    parser.add_argument("--json", action="store_true", help="print one JSON object")


def _toml_catalog_options(path: str | Path) -> tuple[dict[str, Any], str]:
    """The ``[catalog]`` table and ``[model] spacing`` of a run config (stand-in).

    Only these two entries are read; the full config parser validates the rest.
    """
    p = Path(path)
    try:
        with p.open("rb") as fh:
            data = tomllib.load(fh)
    except FileNotFoundError:
        raise ConfigError(f"{p}: no such run config file") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ConfigError(f"{p}: cannot read the run config ({exc})") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{p}: not valid TOML ({exc})") from None
    catalog = data.get("catalog", {})
    model = data.get("model", {})
    if not isinstance(catalog, dict) or not isinstance(model, dict):
        raise ConfigError(f"{p}: [catalog] and [model] must be tables")
    spacing = model.get("spacing", "mst")
    if spacing not in SPACING_METHODS:
        raise ConfigError(f"{p}: [model] spacing must be one of {', '.join(SPACING_METHODS)}, "
                          f"got {spacing!r}")
    return dict(catalog), spacing


def _catalog_options(path: str | Path) -> tuple[dict[str, Any], str]:
    try:
        from ..inference.config import catalog_options  # the full run-config parser, when present
    except ImportError as exc:
        if isinstance(exc, ModuleNotFoundError) and exc.name != "infer.inference.config":
            raise
        return _toml_catalog_options(path)
    return catalog_options(path)


def run(args: argparse.Namespace) -> int:
    overrides, spacing = (_catalog_options(args.config) if args.config else ({}, "mst"))
    if args.spacing is not None:
        spacing = args.spacing
    data = check_catalog(args.catalog, overrides=overrides, spacing=spacing)
    if args.json:
        print(json.dumps(data, indent=2, allow_nan=False, ensure_ascii=False))
    else:
        print(format_text(data))
    return 0


def _g(v: float | None, digits: int = 3) -> str:
    return "n/a" if v is None else f"{v:.{digits}g}"


_LENGTH, _MASS, _AREA = QUANTITIES["spacing"], QUANTITIES["clump_mass"], QUANTITIES["area"]
_STAR = QUANTITIES["stellar_mass"]


def _v(d: dict[str, Any], q: QuantityInfo, stem: str, *, unit: bool = True) -> str:
    """The entry ``stem`` (keyed in the unit of ``q``), with that unit unless ``unit=False``."""
    text = _g(d[q.key(stem)])
    return f"{text} {q.unit_text}" if unit else text


def _block(d: dict[str, Any], indent: str = "  ") -> list[str]:
    method = "minimum spanning tree" if d["spacing_method"] == "mst" else "nearest neighbour"
    in_star = (1.0 * _MASS.astropy_unit).to_value(_STAR.astropy_unit)
    lines = [
        f"{indent}clumps                 {d['n_clumps']}",
        f"{indent}spacings ({method}, {d['spacing_count']})",
        f"{indent}  median               {_v(d, _LENGTH, 'spacing_median')}"
        f"   (16-84%: {_v(d, _LENGTH, 'spacing_p16', unit=False)} - "
        f"{_v(d, _LENGTH, 'spacing_p84')})",
        f"{indent}  min, max             {_v(d, _LENGTH, 'spacing_min', unit=False)}, "
        f"{_v(d, _LENGTH, 'spacing_max')}",
        f"{indent}masses{' (from fluxes)' if d.get('mass_from_flux') else ''}",
        f"{indent}  median               {_v(d, _MASS, 'mass_median')}"
        f"   (16-84%: {_v(d, _MASS, 'mass_p16', unit=False)} - {_v(d, _MASS, 'mass_p84')}; "
        f"{_g(d[_MASS.key('mass_median')] * in_star)} {_STAR.unit_text})",
        f"{indent}  min, max             {_v(d, _MASS, 'mass_min', unit=False)}, "
        f"{_v(d, _MASS, 'mass_max')}",
    ]
    lines += _selection_lines(d, indent)
    meta = d.get("metadata", {})
    known = [k for k in ("distance", "inclination", "position_angle", "wavelength",
                         "dust_temperature", "dust_opacity_observed", "gas_to_dust") if k in meta]
    if known:
        lines.append(f"{indent}metadata               "
                     + ", ".join(f"{k} {meta[k]}" for k in known))
    return lines


def _selection_lines(d: dict[str, Any], indent: str) -> list[str]:
    """Beam, detection limit and area, with the catalog entries below them."""
    lines = []
    beam = d.get("beam")
    if beam:
        ext = d[_LENGTH.key("beam_extent")]
        lines.append(f"{indent}beam                   {_g(beam['major_arcsec'])} x "
                     f"{_g(beam['minor_arcsec'])} arcsec at PA {_g(beam['pa_deg'])} deg "
                     f"({_g(min(ext))}-{_g(max(ext))} {_LENGTH.unit_text} along the spacings); "
                     f"{d['spacings_below_beam']} spacing(s) below it")
    if d.get(_MASS.key("mass_limit")) is not None:
        lines.append(f"{indent}detection limit        {_v(d, _MASS, 'mass_limit')}; "
                     f"{d['masses_below_limit']} mass(es) at or below it")
    if d.get(_AREA.key()) is not None:
        lines.append(f"{indent}searched area          {_v(d, _AREA, 'area')} (disk plane)")
    return lines


def format_text(d: dict[str, Any]) -> str:
    """Human-readable summary of a :func:`infer.catalog.regions.check_catalog` result."""
    lines = [f"Catalog {d['file']}: {d['n_clumps']} clumps"
             + (f" in {d['n_regions']} regions" if d["n_regions"] > 1 else "")]
    if d["n_regions"] > 1:
        for r in d["regions"]:
            lines.append(f"region {r['name']}")
            lines += _block(r)
        lines.append("all regions")
        lines.append(f"  spacings median {_v(d, _LENGTH, 'spacing_median')} over "
                     f"{d['spacing_count']}; masses median {_v(d, _MASS, 'mass_median')} over "
                     f"{d['n_clumps']}")
    else:
        lines += _block(d)
    lines.append("warnings" + ("" if d["warnings"] else ": none"))
    lines += [f"  - {w}" for w in d["warnings"]]
    lines.append("excluded rows" + ("" if d["excluded"] else ": none"))
    lines += [f"  - {x}" for x in d["excluded"]]
    return "\n".join(lines)

"""``infer check``: read and validate a clump catalog; spacing and mass statistics."""

from __future__ import annotations

import argparse
import json
import tomllib
from pathlib import Path
from typing import Any

import astropy.units as u

from ..catalog.regions import SPACING_METHODS, check_catalog
from ..errors import ConfigError

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


def _block(d: dict[str, Any], indent: str = "  ") -> list[str]:
    method = "minimum spanning tree" if d["spacing_method"] == "mst" else "nearest neighbour"
    lines = [
        f"{indent}clumps                 {d['n_clumps']}",
        f"{indent}spacings ({method}, {d['spacing_count']})",
        f"{indent}  median               {_g(d['spacing_median_au'])} au"
        f"   (16-84%: {_g(d['spacing_p16_au'])} - {_g(d['spacing_p84_au'])} au)",
        f"{indent}  min, max             {_g(d['spacing_min_au'])}, {_g(d['spacing_max_au'])} au",
        f"{indent}masses{' (from fluxes)' if d.get('mass_from_flux') else ''}",
        f"{indent}  median               {_g(d['mass_median_mjup'])} M_Jup"
        f"   (16-84%: {_g(d['mass_p16_mjup'])} - {_g(d['mass_p84_mjup'])} M_Jup; "
        f"{_g(d['mass_median_mjup'] * (u.M_jup.to(u.solMass)))} M_sun)",
        f"{indent}  min, max             {_g(d['mass_min_mjup'])}, {_g(d['mass_max_mjup'])} M_Jup",
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
        ext = d["beam_extent_au"]
        lines.append(f"{indent}beam                   {_g(beam['major_arcsec'])} x "
                     f"{_g(beam['minor_arcsec'])} arcsec at PA {_g(beam['pa_deg'])} deg "
                     f"({_g(min(ext))}-{_g(max(ext))} au along the spacings); "
                     f"{d['spacings_below_beam']} spacing(s) below it")
    if d.get("mass_limit_mjup") is not None:
        lines.append(f"{indent}detection limit        {_g(d['mass_limit_mjup'])} M_Jup; "
                     f"{d['masses_below_limit']} mass(es) at or below it")
    if d.get("area_au2") is not None:
        lines.append(f"{indent}searched area          {_g(d['area_au2'])} au2 (disk plane)")
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
        lines.append(f"  spacings median {_g(d['spacing_median_au'])} au over {d['spacing_count']}; "
                     f"masses median {_g(d['mass_median_mjup'])} M_Jup over {d['n_clumps']}")
    else:
        lines += _block(d)
    lines.append("warnings" + ("" if d["warnings"] else ": none"))
    lines += [f"  - {w}" for w in d["warnings"]]
    lines.append("excluded rows" + ("" if d["excluded"] else ": none"))
    lines += [f"  - {x}" for x in d["excluded"]]
    return "\n".join(lines)

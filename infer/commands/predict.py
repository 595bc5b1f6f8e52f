"""``infer predict``: the forward model for one set of conditions."""

from __future__ import annotations

import argparse
import json

import numpy as np

from ..errors import InferError
from ..physics.predict import predict
from .conditions import add_condition_arguments, conditions_from_args, option_message

__all__ = ["add_arguments", "run"]


def add_arguments(parser: argparse.ArgumentParser) -> None:
    add_condition_arguments(parser)
    parser.add_argument("--json", action="store_true", help="print one JSON object")


def run(args: argparse.Namespace) -> int:
    try:
        out = predict(**conditions_from_args(args))
    except InferError as exc:
        raise option_message(exc) from None
    if np.size(out.unstable) != 1:
        raise InferError("the command line takes single values, not lists")
    data = out.to_json_dict()
    if args.json:
        print(json.dumps(data, indent=2, allow_nan=False))
        return 0
    print(format_text(data))
    return 0


def _fmt(value, unit: str = "", digits: int = 3) -> str:
    if value is None:
        return "n/a"
    text = f"{value:.{digits}g}"
    return f"{text} {unit}".rstrip()


def format_text(d: dict) -> str:
    lines = []
    if d["unstable"]:
        lines.append("The sheet is gravitationally unstable.")
        lines.append(f"  fastest-growing wavelength  {_fmt(d['wavelength_au'], 'au')}")
        lines.append(f"  growth (e-folding) time     {_fmt(d['growth_time_yr'], 'yr')}")
        lines.append(f"  fragment mass               {_fmt(d['fragment_mass_mjup'], 'M_Jup')}"
                     f"   ({d['fragment_mass_convention']} convention: "
                     + ("Sigma*lambda^2)" if d['fragment_mass_convention'] == 'square'
                        else "Sigma*pi*(lambda/2)^2)"))
        lines.append(f"  growing band                {_fmt(d['band_short_au'], 'au')} to "
                     f"{_fmt(d['band_long_au'], 'au')}")
    else:
        lines.append("The sheet is stable: no wavelength grows under these conditions.")
    lines.append(f"  thermal fastest wavelength  {_fmt(d['thermal_wavelength_au'], 'au')}"
                 f"   (no field, no rotation; mass {_fmt(d['thermal_mass_mjup'], 'M_Jup')})")
    lines.append(f"  mass-to-flux ratio          {_fmt(d['mass_to_flux'])}  (critical = 1)")
    lines.append(f"  field strength              {_fmt(d['field_mG'], 'mG')}")
    lines.append(f"  Toomre Q                    {_fmt(d['toomre_q'])}")
    if d.get("toomre_q_critical_magnetic") is not None:
        lines.append(f"  critical Q, field support   {_fmt(d['toomre_q_critical_magnetic'])}"
                     "   (flux frozen: grows only below it)")
    lines.append(f"  eta_AD, eta_Ohm             {_fmt(d['eta_ad_cm2_s'], 'cm2/s')}, "
                 f"{_fmt(d['eta_ohm_cm2_s'], 'cm2/s')}")
    if d.get("ionization") is not None:
        lines.append(f"  ionization fraction x_e     {_fmt(d['ionization'])}"
                     f"   (tau_ni {_fmt(d['tau_ni_yr'], 'yr')})")
    lines.append(f"  midplane density, Z0        {_fmt(d['midplane_density_g_cm3'], 'g/cm3')}, "
                 f"{_fmt(d['scale_height_au'], 'au')}")
    return "\n".join(lines)

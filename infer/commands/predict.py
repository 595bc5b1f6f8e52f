"""``infer predict``: the forward model for one set of conditions."""

from __future__ import annotations

import argparse
import json

import numpy as np

from ..errors import InferError
from ..physics.predict import predict
from ..quantities import QUANTITIES
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


def _val(d: dict, name: str) -> str:
    """The JSON entry of quantity ``name`` with its unit (both from the registry)."""
    q = QUANTITIES[name]
    return _fmt(d[q.key()], q.unit_text)


def format_text(d: dict) -> str:
    lines = []
    if d["unstable"]:
        lines.append("The sheet is gravitationally unstable.")
        lines.append(f"  fastest-growing wavelength  {_val(d, 'wavelength')}")
        lines.append(f"  growth (e-folding) time     {_val(d, 'growth_time')}")
        lines.append(f"  fragment mass               {_val(d, 'fragment_mass')}"
                     f"   ({d['fragment_mass_convention']} convention: "
                     + ("Sigma*lambda^2)" if d['fragment_mass_convention'] == 'square'
                        else "Sigma*pi*(lambda/2)^2)"))
        lines.append(f"  growing band                {_val(d, 'band_short')} to "
                     f"{_val(d, 'band_long')}")
    else:
        lines.append("The sheet is stable: no wavelength grows under these conditions.")
    lines.append(f"  thermal fastest wavelength  {_val(d, 'thermal_wavelength')}"
                 f"   (no field, no rotation; mass {_val(d, 'thermal_mass')})")
    lines.append(f"  mass-to-flux ratio          {_val(d, 'mass_to_flux')}  (critical = 1)")
    lines.append(f"  field strength              {_val(d, 'field')}")
    lines.append(f"  Toomre Q                    {_val(d, 'toomre_q')}")
    if d.get("toomre_q_critical_magnetic") is not None:
        lines.append(f"  critical Q, field support   {_val(d, 'toomre_q_critical_magnetic')}"
                     "   (flux frozen: grows only below it)")
    lines.append(f"  eta_AD, eta_Ohm             {_val(d, 'eta_ad')}, {_val(d, 'eta_ohm')}")
    if d.get("ionization") is not None:
        lines.append(f"  ionization fraction x_e     {_val(d, 'ionization')}"
                     f"   (tau_ni {_val(d, 'tau_ni')})")
    lines.append(f"  midplane density, Z0        {_val(d, 'midplane_density')}, "
                 f"{_val(d, 'scale_height')}")
    return "\n".join(lines)

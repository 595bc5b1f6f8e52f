"""The condition options shared by ``infer predict`` and ``infer spectrum``."""

from __future__ import annotations

import argparse
import re
from typing import Any

from ..constants import MU_GAS
from ..errors import InferError

__all__ = ["add_condition_arguments", "conditions_from_args", "OPTIONS"]

#: keyword of infer.physics.predict -> (command-line option, help)
OPTIONS: dict[str, tuple[str, str]] = {
    "surface_density": ("--surface-density", 'total gas surface density, e.g. "80 g/cm2"'),
    "column_density": ("--column-density", 'H2 column density instead, e.g. "2e25 cm-2"'),
    "temperature": ("--temperature", 'gas temperature, e.g. "40 K"'),
    "field": ("--field", 'vertical field strength, e.g. "1.5 mG"'),
    "mass_to_flux": ("--mass-to-flux", "mass-to-flux ratio in units of the critical value"),
    "eta_ad": ("--eta-ad", 'ambipolar diffusivity, e.g. "1e18 cm2/s"'),
    "eta_ohm": ("--eta-ohm", 'Ohmic diffusivity, e.g. "1e16 cm2/s"'),
    "ionization": ("--ionization", "ionization fraction x_e (derives both diffusivities)"),
    "cosmic_ray_rate": ("--cosmic-ray-rate",
                        'derive x_e from cosmic-ray ionization equilibrium, e.g. "1e-17 1/s"'),
    "kappa": ("--kappa", 'epicyclic frequency, e.g. "2e-10 1/s"'),
    "stellar_mass": ("--stellar-mass", 'stellar mass for a Keplerian disk, e.g. "0.4 solMass"'),
    "radius": ("--radius", 'orbital radius for a Keplerian disk, e.g. "100 au"'),
    "external_pressure": ("--external-pressure", 'confining pressure, e.g. "0 dyn/cm2"'),
}


def add_condition_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the condition options (each a number with a unit, as one string)."""
    group = parser.add_argument_group("local conditions (a number and a unit as one string)")
    for key, (opt, help_text) in OPTIONS.items():
        group.add_argument(opt, dest=key, metavar="VALUE", default=None, help=help_text)
    group.add_argument("--mu-gas", dest="mu_gas", type=float, default=MU_GAS,
                       help=f"mean mass per particle in m_H (default {MU_GAS:g})")
    group.add_argument("--fragment-shape", choices=["square", "disk"], default="square",
                       help="fragment mass as Sigma*lambda^2 (square, default) "
                            "or Sigma*pi*(lambda/2)^2 (disk)")


def conditions_from_args(args: argparse.Namespace) -> dict[str, Any]:
    """Keyword arguments for :func:`infer.physics.predict` from parsed options."""
    kwargs = {key: getattr(args, key) for key in OPTIONS if getattr(args, key) is not None}
    kwargs["mu_gas"] = args.mu_gas
    kwargs["fragment_shape"] = args.fragment_shape
    return kwargs


_NAME_RE = re.compile(r"\b(" + "|".join(OPTIONS) + r"|mu_gas|fragment_shape)\b")


def option_message(exc: InferError) -> InferError:
    """Rewrite an API error so that it names command-line options."""

    def repl(m: re.Match[str]) -> str:
        key = m.group(1)
        return OPTIONS[key][0] if key in OPTIONS else "--" + key.replace("_", "-")

    return InferError(_NAME_RE.sub(repl, str(exc)))

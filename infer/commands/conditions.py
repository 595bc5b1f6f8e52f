"""The condition options shared by ``infer predict`` and ``infer spectrum``."""

from __future__ import annotations

import argparse
import re
from typing import Any

from ..constants import MU_GAS
from ..errors import InferError
from ..quantities import QUANTITIES

__all__ = ["add_condition_arguments", "conditions_from_args", "OPTIONS"]

def _eg(name: str, number: str) -> str:
    """An example value in the quantity's registry unit, e.g. 'e.g. "80 g/cm2"'."""
    return f'e.g. "{number} {QUANTITIES[name].unit.replace(" / ", "/")}"'


#: keyword of infer.physics.predict -> (command-line option, help)
OPTIONS: dict[str, tuple[str, str]] = {
    "surface_density": ("--surface-density",
                        f"total gas surface density, {_eg('surface_density', '80')}"),
    "column_density": ("--column-density", f"H2 column density instead, {_eg('column_density', '2e25')}"),
    "temperature": ("--temperature", f"gas temperature, {_eg('temperature', '40')}"),
    "field": ("--field", f"vertical field strength, {_eg('field', '1.5')}"),
    "mass_to_flux": ("--mass-to-flux", "mass-to-flux ratio in units of the critical value"),
    "eta_ad": ("--eta-ad", f"ambipolar diffusivity, {_eg('eta_ad', '1e18')}"),
    "eta_ohm": ("--eta-ohm", f"Ohmic diffusivity, {_eg('eta_ohm', '1e16')}"),
    "ionization": ("--ionization", "ionization fraction x_e (derives both diffusivities)"),
    "cosmic_ray_rate": ("--cosmic-ray-rate", f"derive x_e from cosmic-ray ionization equilibrium, "
                                             f"{_eg('cosmic_ray_rate', '1e-17')}"),
    "kappa": ("--kappa", f"epicyclic frequency, {_eg('kappa', '2e-10')}"),
    "stellar_mass": ("--stellar-mass",
                     f"stellar mass for a Keplerian disk, {_eg('stellar_mass', '0.4')}"),
    "radius": ("--radius", f"orbital radius for a Keplerian disk, {_eg('radius', '100')}"),
    "external_pressure": ("--external-pressure",
                          f"confining pressure, {_eg('external_pressure', '0')}"),
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

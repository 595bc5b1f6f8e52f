"""``infer spectrum``: growth rate against wavelength, as CSV or a figure.

Stable conditions (nothing grows) are a user error here: the command writes
no file, prints one line saying so and exits with code 2 (``infer predict``
shows the details of the stable sheet).
"""

from __future__ import annotations

import argparse
from pathlib import Path

from ..errors import InferError
from ..physics.spectrum import FORMATS, growth_spectrum, write_spectrum
from ..quantities import QUANTITIES
from .conditions import add_condition_arguments, conditions_from_args, option_message

__all__ = ["add_arguments", "run"]


def add_arguments(parser: argparse.ArgumentParser) -> None:
    add_condition_arguments(parser)
    parser.add_argument("--out", metavar="FILE", required=True,
                        help="output file; the suffix picks the format: .csv (columns "
                             "wavelength_au, growth_rate_per_yr, growth_time_yr), .png or .pdf "
                             "(a plot). Replaced atomically if it exists")
    parser.add_argument("--points", metavar="N", type=int, default=400,
                        help="number of wavelengths, log-spaced across the growing band "
                             "(default 400)")


def run(args: argparse.Namespace) -> int:
    out = Path(args.out)
    if out.suffix.lower() not in FORMATS:
        raise InferError(f"--out: unknown file type {out.suffix or '(none)'!r}; "
                         f"use one of {', '.join(FORMATS)}")
    if not 10 <= args.points <= 1_000_000:
        raise InferError(f"--points: must be from 10 to 1000000, got {args.points}")
    try:
        spec = growth_spectrum(n_points=args.points, **conditions_from_args(args))
    except InferError as exc:
        raise option_message(exc) from None
    if not spec.unstable:
        raise InferError("no wavelength grows under these conditions, so there is no spectrum "
                         f"to write; {out} was not written (see infer predict for the details)")
    write_spectrum(spec, out, name="--out")
    pred = spec.prediction
    lam, time = QUANTITIES["wavelength"], QUANTITIES["growth_time"]

    def v(q, x) -> str:
        return f"{x.to_value(q.astropy_unit):.3g}"

    print(f"wrote {out}: {len(spec.wavelength)} wavelengths from "
          f"{v(lam, spec.wavelength[0])} to {v(lam, spec.wavelength[-1])} {lam.unit_text}; fastest "
          f"{v(lam, pred.wavelength)} {lam.unit_text} (e-folding {v(time, pred.growth_time)} "
          f"{time.unit_text})")
    return 0

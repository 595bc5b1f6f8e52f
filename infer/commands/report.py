"""``infer report``: a proposal-ready report of a fit, or a LOO comparison of two fits.

    infer report DIR [--forecast-field 20%] [--forecast-temperature 10%] [--forecast-column-density 30%]
    infer report DIR1 DIR2 --compare [--out FILE]
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ..errors import InferError

__all__ = ["add_arguments", "run"]

#: option suffix -> measured quantity of :func:`infer.inference.forecast.forecast`
_FORECASTS = {"field": "field", "temperature": "temperature", "column_density": "column_density"}


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("dirs", nargs="+", metavar="DIR",
                        help="a fit folder (two with --compare)")
    parser.add_argument("--compare", action="store_true",
                        help="compare two fits of the same catalog by PSIS-LOO; writes compare.md")
    parser.add_argument("--out", metavar="FILE", default=None,
                        help="with --compare: where to write the comparison (default DIR1/compare.md)")
    for key in _FORECASTS:
        opt = key.replace("_", "-")
        parser.add_argument(f"--forecast-{opt}", metavar="PRECISION", default=None, dest=f"fc_{key}",
                            help=f"forecast how a {opt.replace('-', ' ')} measurement of this "
                                 f"precision (e.g. 20%% or 0.2) would narrow the posteriors")
    parser.add_argument("--forecast-draws", type=int, default=200, metavar="N",
                        help="simulated measurements per forecast (default 200)")
    parser.add_argument("--seed", type=int, default=0, help="seed of the forecasts (default 0)")


def run(args: argparse.Namespace) -> int:
    from ..inference.forecast import parse_precision

    fcs = []
    for key, measured in _FORECASTS.items():
        v = getattr(args, f"fc_{key}")
        if v is not None:
            fcs.append((measured, parse_precision(v, name=f"--forecast-{key.replace('_', '-')}")))
    if args.compare:
        if len(args.dirs) != 2:
            raise InferError(f"--compare takes exactly two fit folders, got {len(args.dirs)}")
        if fcs:
            raise InferError("--forecast-* options apply to a single report, not to --compare")
        return _compare(args)
    if len(args.dirs) != 1:
        raise InferError(f"give one fit folder (or two with --compare), got {len(args.dirs)}")
    if args.out is not None:
        raise InferError("--out applies to --compare; a report is written into its fit folder")
    if args.forecast_draws < 10:
        raise InferError(f"--forecast-draws: must be at least 10, got {args.forecast_draws}")
    from ..outputs.report import build_report, write_report

    rep = build_report(args.dirs[0], forecasts=fcs, n_draws=args.forecast_draws, seed=args.seed)
    written = write_report(rep)
    print(rep.paragraph)
    for f in rep.forecasts:
        print()
        print(f.to_text())
    print()
    print("wrote " + ", ".join(str(p) for p in written))
    sys.stdout.flush()
    return 0


def _compare(args: argparse.Namespace) -> int:
    from ..outputs.files import atomic_write_text
    from ..outputs.fitfolder import open_fit
    from ..pipeline.compare import compare_fits

    out = Path(args.out) if args.out else open_fit(args.dirs[0]).compare_file
    if out.is_dir():
        raise InferError(f"--out {out}: is a folder; give a file name such as {out / 'compare.md'}")
    if not out.parent.is_dir():
        raise InferError(f"--out {out}: the folder {out.parent} does not exist")
    cmp = compare_fits(args.dirs[0], args.dirs[1])
    atomic_write_text(out, cmp.to_markdown())
    print(cmp.to_text())
    print()
    print(f"wrote {out}")
    return 0

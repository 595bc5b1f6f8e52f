"""``infer fit``: sample the posterior of one catalog (or one region of it)."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ..inference.config import load_config

__all__ = ["add_arguments", "run"]


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("catalog", metavar="CATALOG", help="clump catalog (ECSV, CSV, FITS, VOTable)")
    parser.add_argument("--config", required=True, metavar="RUN.toml", help="run configuration")
    parser.add_argument("--out", required=True, metavar="DIR", help="output folder")
    parser.add_argument("--resume", action="store_true",
                        help="continue the chain saved in DIR towards --max-steps")
    parser.add_argument("--seed", type=int, default=None, help="random seed (overrides the config)")
    parser.add_argument("--walkers", type=int, default=None, help="number of walkers")
    parser.add_argument("--max-steps", type=int, default=None, help="cap on the chain length")
    parser.add_argument("--region", default=None, metavar="NAME",
                        help="which region (group) of a multi-region catalog to fit")
    parser.add_argument("--no-plots", action="store_true", help="skip the corner and predictive figures")
    parser.add_argument("--quiet", action="store_true", help="no progress bar")


def run(args: argparse.Namespace) -> int:
    from ..pipeline.fit import fit_catalog

    config = load_config(args.config).with_sampler(seed=args.seed, walkers=args.walkers,
                                                   max_steps=args.max_steps)
    if not Path(args.catalog).exists():
        from ..errors import CatalogError

        raise CatalogError(f"{args.catalog}: catalog file not found")
    out = fit_catalog(args.catalog, config, args.out, resume=args.resume, region=args.region,
                      progress=not args.quiet, plots=not args.no_plots)
    d = out.diagnostics
    status = "converged" if d["converged"] else "NOT converged (raise --max-steps and --resume)"
    print(f"{out.out_dir}: {d['steps']} steps x {d['walkers']} walkers, {status}; "
          f"max autocorrelation time {max(v for v in d['autocorrelation_time'].values() if v):.0f} steps, "
          f"acceptance {d['acceptance_fraction']:.2f}, {d['wall_time_s']:.0f} s")
    print()
    print(format_summary(out.summary))
    for note in out.notes:
        print(f"note: {note}")
    sys.stdout.flush()
    return 0


def format_summary(table) -> str:
    """Compact text rendering of the summary table."""
    lines = [f"{'quantity':<20} {'median':>10} {'68% interval':>24}  unit"]
    for r in table:
        if r["kind"] == "fixed":
            continue
        lines.append(f"{r['name']:<20} {r['median']:>10.3g} {r['p16']:>11.3g} - {r['p84']:<11.3g}  "
                     f"{r['unit']}")
    return "\n".join(lines)

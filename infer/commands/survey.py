"""``infer survey``: fit many catalogs or regions in parallel on a Dask cluster."""

from __future__ import annotations

import argparse
from pathlib import Path

__all__ = ["add_arguments", "run"]


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("catalogs", nargs="+", metavar="CATALOG",
                        help="clump catalogs; one region each, or one per value of a group column")
    parser.add_argument("--config", required=True, metavar="RUN.toml", help="run configuration")
    parser.add_argument("--out", required=True, metavar="DIR",
                        help="output folder: one sub-folder per region, survey.ecsv/.csv/.png/.pdf")
    parser.add_argument("--scheduler", default=None, metavar="ADDRESS",
                        help="address of a running Dask scheduler (tcp://host:8786); default: a "
                             "local cluster of worker processes")
    parser.add_argument("--workers", type=int, default=None, metavar="N",
                        help="worker processes of the local cluster (default: one per core)")
    parser.add_argument("--seed", type=int, default=None, metavar="N",
                        help="run seed (overrides the config); each region's seed derives from it")
    parser.add_argument("--walkers", type=int, default=None, metavar="N", help="number of walkers")
    parser.add_argument("--max-steps", type=int, default=None, metavar="N", help="cap on each chain's length")
    parser.add_argument("--no-plots", action="store_true",
                        help="skip each region's corner and predictive figures")
    parser.add_argument("--ignore-local-conditions", action="store_true",
                        help="use the config's priors as they are for every region, ignoring the "
                             "catalogs' local_conditions metadata")
    parser.add_argument("--quiet", action="store_true", help="no progress bar")


def run(args: argparse.Namespace) -> int:
    from ..errors import InferError
    from ..inference.config import load_config
    from ..pipeline.survey import run_survey

    config = load_config(args.config).with_sampler(seed=args.seed, walkers=args.walkers,
                                                   max_steps=args.max_steps)
    result = run_survey(args.catalogs, config, args.out, scheduler=args.scheduler,
                        n_workers=args.workers, progress=not args.quiet, plots=not args.no_plots,
                        local_conditions=not args.ignore_local_conditions)
    t = result.table
    table_path = Path(args.out) / "survey.ecsv"
    n_conv = int(sum(bool(c) for c, e in zip(t["converged"], t["error"], strict=True) if not e))
    n_ok = len(t) - len(result.failed)
    if len(t) and n_ok == 0:
        first = next(str(e) for e in t["error"] if e)
        raise InferError(f"every region failed ({len(t)}; the first: {first}); the errors are in "
                         f"{table_path}")
    print(f"{table_path}: {len(t)} region{'s' if len(t) != 1 else ''}: {len(result.fitted)} fitted, "
          f"{len(result.skipped)} already done, {len(result.failed)} failed; "
          f"{n_conv} of {n_ok} converged")
    for name, err in zip(t["region"], t["error"], strict=True):
        if err:
            print(f"failed: {name}: {err}")
    if n_conv < n_ok:
        print("note: chains that stopped at max_steps are marked converged = False; run the same "
              "command with a larger --max-steps to continue them")
    return 0

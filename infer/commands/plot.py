"""``infer plot``: redraw the corner and predictive figures of a saved fit folder."""

from __future__ import annotations

import argparse

from ..errors import InferError

__all__ = ["add_arguments", "run", "parse_formats"]

_FORMATS = ("png", "pdf")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("dir", metavar="DIR", help="output folder of `infer fit`")
    parser.add_argument("--format", default="pdf,png", metavar="LIST",
                        help="comma-separated figure formats among png, pdf (default: pdf,png)")


def parse_formats(text: str) -> tuple[str, ...]:
    """``"png,pdf"`` -> ("png", "pdf"); raises InferError naming a bad entry."""
    items = [t.strip().lower().lstrip(".") for t in str(text).split(",") if t.strip()]
    if not items:
        raise InferError("--format: give at least one of png, pdf")
    for t in items:
        if t not in _FORMATS:
            raise InferError(f"--format: unknown format {t!r}; use png, pdf or png,pdf")
    return tuple(dict.fromkeys(items))


def run(args: argparse.Namespace) -> int:
    formats = parse_formats(args.format)
    from ..outputs import figures
    from ..outputs.fitfolder import open_fit

    fit = open_fit(args.dir).load()
    for path in figures.write_figures(args.dir, post=fit.posterior(), model=fit.model,
                                      region=fit.region, formats=formats):
        print(path)
    return 0

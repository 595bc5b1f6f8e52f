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
    from ..inference.posterior import posterior_from_chain
    from ..outputs.figures import write_figures
    from ..pipeline.fit import load_fit

    _, model, region, chain, tau = load_fit(args.dir)
    post = posterior_from_chain(model, chain, tau)
    for path in write_figures(args.dir, post=post, model=model, region=region, formats=formats):
        print(path)
    return 0

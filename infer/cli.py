"""The ``infer`` command: parses options, calls the library, prints.

Each sub-command lives in :mod:`infer.commands` as a module with
``add_arguments(parser)`` and ``run(args) -> int``; this file only wires them
up and turns errors into exit codes:

* 0 success;
* 2 a user error (bad option, file, catalog, config, refused overwrite,
  missing or corrupted chain): one line on stderr, never a traceback;
* 1 an internal failure (a bug): a short line, the traceback with ``--debug``.
"""

from __future__ import annotations

import argparse
import importlib
import sys
import traceback
from collections.abc import Sequence

from .errors import InferError

__all__ = ["main", "build_parser", "COMMANDS"]

#: sub-command name -> (module in infer.commands, one-line help)
COMMANDS: dict[str, tuple[str, str]] = {
    "predict": ("predict", "fastest-growing wavelength, growth time and fragment mass for given conditions"),
    "spectrum": ("spectrum", "growth rate against wavelength, as CSV or a plot"),
    "check": ("check", "read and validate a clump catalog; spacing and mass statistics"),
    "fit": ("fit", "sample the posterior of a catalog's field and diffusivities"),
    "plot": ("plot", "redraw the figures of a finished fit"),
    "report": ("report", "a proposal-ready report (PDF + Markdown) of a finished fit"),
    "survey": ("survey", "fit many catalogs or regions in parallel on a Dask cluster"),
}


class _Parser(argparse.ArgumentParser):
    """ArgumentParser whose errors are one line and exit code 2."""

    def error(self, message: str) -> None:  # type: ignore[override]
        sys.stderr.write(f"{self.prog}: error: {message} (see {self.prog} --help)\n")
        raise SystemExit(2)


def build_parser() -> argparse.ArgumentParser:
    """The full argument parser (sub-command modules are imported here)."""
    from . import __version__

    parser = _Parser(prog="infer", description=__doc__.splitlines()[0])
    parser.add_argument("--version", action="version", version=f"infer {__version__}")
    parser.add_argument("--debug", action="store_true",
                        help="show the full traceback of an internal error")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name, (module, help_text) in COMMANDS.items():
        p = sub.add_parser(name, help=help_text, description=help_text)
        p.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                       help="show the full traceback of an internal error")
        mod = _load(module)
        if mod is None:
            p.set_defaults(_unavailable=name)
            continue
        mod.add_arguments(p)
        p.set_defaults(_run=mod.run)
    return parser


def _load(module: str):
    try:
        return importlib.import_module(f"infer.commands.{module}")
    except ModuleNotFoundError as exc:
        if exc.name == f"infer.commands.{module}":
            return None
        raise


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    if getattr(args, "_unavailable", None):
        sys.stderr.write(f"infer {args.command}: error: this command is not available "
                         f"in this version\n")
        return 2
    prog = f"infer {args.command}"
    try:
        return int(args._run(args) or 0)
    except InferError as exc:
        sys.stderr.write(f"{prog}: error: {_one_line(exc)}\n")
        return 2
    except KeyboardInterrupt:
        sys.stderr.write(f"{prog}: interrupted\n")
        return 130
    except BrokenPipeError:
        return 0
    except Exception as exc:  # an internal failure: a bug
        if getattr(args, "debug", False):
            traceback.print_exc()
        sys.stderr.write(f"{prog}: internal error ({type(exc).__name__}: {_one_line(exc)}); "
                         f"rerun with --debug for the traceback and please report it\n")
        return 1


def _one_line(exc: BaseException) -> str:
    return " ".join(str(exc).split()) or type(exc).__name__

"""A growth spectrum written to a file (``infer spectrum --out``): CSV, PNG or PDF.

The spectrum is :func:`infer.physics.spectrum.growth_spectrum`; its figure is
:func:`infer.physics.spectrum.spectrum_figure`. The file is written atomically
(:func:`infer.outputs.files.atomic_write_bytes`): rendered in memory, then a temporary
file in the same folder renamed over the target.
"""

from __future__ import annotations

import os
from pathlib import Path

import astropy.units as u

from ..errors import InferError
from ..physics import spectrum as _spectrum
from ..physics.spectrum import Spectrum
from .files import atomic_write_bytes, render_figure

__all__ = ["write_spectrum", "spectrum_csv", "FORMATS"]

#: output suffixes understood by :func:`write_spectrum`
FORMATS = (".csv", ".png", ".pdf")


def spectrum_csv(spec: Spectrum) -> str:
    """CSV text: ``wavelength_au,growth_rate_per_yr,growth_time_yr``, one row per wavelength."""
    rows = ["wavelength_au,growth_rate_per_yr,growth_time_yr"]
    for lam, rate, time in zip(spec.wavelength.to_value(u.au), spec.growth_rate.to_value(1 / u.yr),
                               spec.growth_time.to_value(u.yr), strict=True):
        rows.append(f"{lam:.10e},{rate:.10e},{time:.10e}")
    return "\n".join(rows) + "\n"


def write_spectrum(spec: Spectrum, path: str | os.PathLike, *, name: str = "path") -> Path:
    """Write ``spec`` to ``path``; the suffix picks the format (.csv, .png, .pdf).

    CSV columns: ``wavelength_au,growth_rate_per_yr,growth_time_yr`` (growth time
    ``inf`` where nothing grows). Figures: growth rate against wavelength on log
    axes, with the growth time on the right-hand axis, the fastest and the
    thermal fastest wavelengths marked and the unstable band shaded.

    Parameters
    ----------
    spec : Spectrum
    path : str or path-like
    name : str
        How to call ``path`` in error messages (e.g. ``"--out"``).

    Returns
    -------
    Path
        The file written.

    Raises
    ------
    InferError
        Unknown suffix, or the file cannot be written (nothing is left behind).
    """
    target = Path(path)
    suffix = target.suffix.lower()
    if suffix not in FORMATS:
        raise InferError(f"{name}: unknown file type {suffix or '(none)'!r} in {str(target)!r}; "
                         f"use one of {', '.join(FORMATS)}")
    if target.is_dir():
        raise InferError(f"{name}: {str(target)!r} is a folder; give a file name")
    if suffix == ".csv":
        data = spectrum_csv(spec).encode()
    else:
        data = render_figure(_spectrum.spectrum_figure(spec), suffix[1:], dpi=150)
    try:
        atomic_write_bytes(target, data)
    except InferError as exc:
        raise InferError(f"{name}: cannot write {str(target)!r} ({exc}); check that the folder "
                         f"exists and is writable") from None
    return target

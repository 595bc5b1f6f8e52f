"""infer: field strength and ionization of a fragmenting thin disk or sheet from its clumps.

The forward model is the linear gravitational instability of an isothermal,
magnetized, partially ionized, rotating thin sheet; the inverse problem is
solved with an emcee ensemble sampler. See the README for the assumptions.

The public API below is imported lazily: ``import infer`` is cheap, and each name loads its
layer on first use.
"""

from __future__ import annotations

import importlib
from typing import Any

from .errors import CatalogError, ChainError, ConfigError, InferError

__version__ = "0.1.0"

#: public name -> module that defines it ("module:name" where the module's name differs)
_LAZY: dict[str, str] = {
    "predict": "infer.physics.predict",
    "Prediction": "infer.physics.predict",
    "growth_spectrum": "infer.physics.spectrum",
    "spectrum_figure": "infer.physics.spectrum",
    "read_catalog": "infer.catalog.regions",
    "check_catalog": "infer.catalog.regions",
    "format_check": "infer.commands.check:format_text",
    "Region": "infer.catalog.regions",
    "dust_flux": "infer.catalog.dustmass",
    "project_to_sky": "infer.catalog.geometry",
    "load_config": "infer.inference.config",
    "RunConfig": "infer.inference.config",
    "forecast": "infer.inference.forecast",
    "compare_fits": "infer.inference.comparison",
    "posterior_from_chain": "infer.inference.posterior",
    "fit_catalog": "infer.pipeline.fit",
    "load_fit": "infer.pipeline.fit",
    "corner_figure": "infer.outputs.figures",
    "predictive_figure": "infer.outputs.figures",
    "spectrum_band": "infer.outputs.band",
    "band_figure": "infer.outputs.band",
    "radial_band": "infer.outputs.radial",
    "radial_figure": "infer.outputs.radial",
    "build_report": "infer.outputs.report",
    "write_report": "infer.outputs.report",
    "run_survey": "infer.pipeline.survey",
}

__all__ = ["__version__", "InferError", "CatalogError", "ConfigError", "ChainError", *_LAZY]


def __getattr__(name: str) -> Any:
    try:
        module, _, attr = _LAZY[name].partition(":")
    except KeyError:
        raise AttributeError(f"module 'infer' has no attribute {name!r}") from None
    value = getattr(importlib.import_module(module), attr or name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))

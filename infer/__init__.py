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

#: public name -> module that defines it
_LAZY: dict[str, str] = {
    "predict": "infer.physics.predict",
    "Prediction": "infer.physics.predict",
    "growth_spectrum": "infer.physics.spectrum",
    "read_catalog": "infer.catalog.regions",
    "check_catalog": "infer.catalog.regions",
    "Region": "infer.catalog.regions",
    "load_config": "infer.inference.config",
    "RunConfig": "infer.inference.config",
    "forecast": "infer.inference.forecast",
    "compare_fits": "infer.inference.comparison",
    "fit_catalog": "infer.pipeline.fit",
    "build_report": "infer.outputs.report",
    "write_report": "infer.outputs.report",
    "run_survey": "infer.pipeline.survey",
}

__all__ = ["__version__", "InferError", "CatalogError", "ConfigError", "ChainError", *_LAZY]


def __getattr__(name: str) -> Any:
    try:
        module = _LAZY[name]
    except KeyError:
        raise AttributeError(f"module 'infer' has no attribute {name!r}") from None
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))

"""infer: field strength and ionization of a fragmenting thin disk or sheet from its clumps.

The forward model is the linear gravitational instability of an isothermal,
magnetized, partially ionized, rotating thin sheet; the inverse problem is
solved with an emcee ensemble sampler. See the README for the assumptions.
"""

from __future__ import annotations

from .errors import CatalogError, ChainError, ConfigError, InferError
from .predict import Prediction, predict

__all__ = ["predict", "Prediction", "InferError", "CatalogError", "ConfigError", "ChainError",
           "__version__"]

__version__ = "0.1.0"

"""Radial profiles of a disk: power laws in radius (cgs floats).

    X(r) = X_0 (r / r_0)^-index          (surface density, temperature, mass-to-flux, x_e)

The epicyclic frequency at r is Keplerian from the stellar mass, kappa = Omega =
sqrt(G M_star / r^3) (docs/physics.md, "Inputs"), computed with the other conditions by
:func:`infer.physics.conditions.keplerian_kappa` (:meth:`infer.inference.model.Model.conditions`).
"""

from __future__ import annotations

import numpy as np

__all__ = ["power_law"]


def power_law(value0, ratio, index) -> np.ndarray:
    """``value0 * ratio ** -index`` (broadcast), with ratio = r / r_0.

    Parameters
    ----------
    value0 : array_like
        Value at the reference radius.
    ratio : array_like
        r / r_0 (> 0).
    index : array_like
        Power-law index (the value falls outwards for a positive index).
    """
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        return np.asarray(value0, dtype=float) * np.asarray(ratio, dtype=float) ** (
            -np.asarray(index, dtype=float))


"""Affine coordinates for the sampler: walkers move in y, the model sees x = shift + matrix y.

The map is fixed for a whole run (it is stored in the chain file's info, so a
resume uses the same one) and has a constant Jacobian, so the posterior in y
is the posterior in x up to a constant: nothing but the moves' geometry
changes. emcee's stretch and differential-evolution moves are affine
invariant; the snooker move (Euclidean projections) and the initial ball are
not, which is what a whitening can change.

``x`` is computed column by column with elementwise operations only (no
matrix product, whose rounding can depend on the batch size), so the stored
chain is exactly the set of points the model was evaluated at.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

__all__ = ["AffineMap", "InSamplerCoordinates", "laplace_covariance", "whitening_map"]


@dataclass(frozen=True)
class AffineMap:
    """x = shift + matrix @ y, applied to rows.

    Attributes
    ----------
    shift : ndarray (ndim,)
    matrix : ndarray (ndim, ndim)
        Invertible.
    """

    shift: np.ndarray
    matrix: np.ndarray

    @classmethod
    def identity(cls, ndim: int) -> AffineMap:
        return cls(np.zeros(ndim), np.eye(ndim))

    @property
    def is_identity(self) -> bool:
        return bool(np.all(self.shift == 0) and np.array_equal(self.matrix, np.eye(self.shift.size)))

    def to_model(self, y: np.ndarray) -> np.ndarray:
        """Model coordinates of rows ``y`` (..., ndim); the identity returns ``y`` itself."""
        y = np.asarray(y, dtype=float)
        if self.is_identity:
            return y
        x = np.broadcast_to(self.shift, y.shape).copy()
        for j in range(self.shift.size):
            x += y[..., j:j + 1] * self.matrix[:, j]
        return x

    def to_sampler(self, x: np.ndarray) -> np.ndarray:
        """Sampler coordinates of rows ``x`` (n, ndim) (inverse map, to rounding)."""
        x = np.asarray(x, dtype=float)
        if self.is_identity:
            return x
        return np.linalg.solve(self.matrix, (x - self.shift).T).T

    def to_info(self) -> dict:
        """JSON-ready form (floats round-trip exactly through Python's json)."""
        return {"shift": [float(v) for v in self.shift],
                "matrix": [[float(v) for v in row] for row in self.matrix]}

    @classmethod
    def from_info(cls, d: dict) -> AffineMap:
        return cls(np.asarray(d["shift"], dtype=float), np.asarray(d["matrix"], dtype=float))


class InSamplerCoordinates:
    """``log_prob`` seen from the sampler's coordinates: y -> log_prob(map.to_model(y)).

    Picklable when ``log_prob`` is.
    """

    def __init__(self, log_prob: Callable, amap: AffineMap):
        self.log_prob = log_prob
        self.map = amap

    def __call__(self, y: np.ndarray) -> np.ndarray:
        return self.log_prob(self.map.to_model(y))


def laplace_covariance(log_prob: Callable, centre: np.ndarray, *, step: np.ndarray,
                       width: np.ndarray) -> np.ndarray | None:
    """Covariance of a Gaussian approximation at ``centre``, or None if it cannot be formed.

    The Hessian of ``log_prob`` comes from central finite differences (one
    vectorized call at 1 + 2 ndim^2 points). A posterior flat in some direction
    (a parameter the data do not constrain) has no curvature there, so the
    precision is regularised with ``1 / width**2`` on the diagonal (a Gaussian
    of the prior's width) and its eigenvalues are floored at the smallest of
    those, which bounds every variance by the widest prior.

    Parameters
    ----------
    log_prob : callable
        Vectorized, (n, ndim) -> (n,).
    centre : ndarray (ndim,)
        Usually the MAP point.
    step : ndarray (ndim,)
        Finite-difference steps.
    width : ndarray (ndim,)
        Prior widths (same coordinates).

    Returns
    -------
    ndarray (ndim, ndim) or None
        None when a difference point has a non-finite log-probability.
    """
    n = centre.size
    e = np.eye(n) * step
    pts = [centre]
    for i in range(n):
        pts += [centre + e[i], centre - e[i]]
    pairs = [(i, j) for i in range(n) for j in range(i + 1, n)]
    for i, j in pairs:
        pts += [centre + e[i] + e[j], centre + e[i] - e[j], centre - e[i] + e[j], centre - e[i] - e[j]]
    v = np.asarray(log_prob(np.array(pts)), dtype=float)
    if not np.all(np.isfinite(v)):
        return None
    h = np.empty((n, n))
    diag = v[1:1 + 2 * n].reshape(n, 2)
    h[np.diag_indices(n)] = (diag[:, 0] - 2.0 * v[0] + diag[:, 1]) / step ** 2
    cross = v[1 + 2 * n:].reshape(-1, 4)
    for (i, j), (pp, pm, mp, mm) in zip(pairs, cross, strict=True):
        h[i, j] = h[j, i] = (pp - pm - mp + mm) / (4.0 * step[i] * step[j])
    precision = -h + np.diag(1.0 / width ** 2)
    w, vec = np.linalg.eigh(0.5 * (precision + precision.T))
    w = np.maximum(w, np.min(1.0 / width ** 2))
    return (vec / w) @ vec.T


def whitening_map(log_prob: Callable, centre: np.ndarray, *, width: np.ndarray) -> AffineMap | None:
    """The affine map whose y are whitened by the Laplace covariance at ``centre``.

    x = centre + chol(C) y; finite differences at 1e-3 of the prior widths (the
    scale of the initial ball). None when the covariance cannot be formed.
    """
    cov = laplace_covariance(log_prob, centre, step=1e-3 * width, width=width)
    if cov is None:
        return None
    try:
        chol = np.linalg.cholesky(cov)
    except np.linalg.LinAlgError:
        return None
    return AffineMap(np.asarray(centre, dtype=float).copy(), chol)

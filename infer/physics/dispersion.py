"""Dimensionless dispersion relation of the magnetized, diffusive, rotating thin sheet.

Units (docs/physics.md, "Dimensionless form"): surface density Sigma, sound speed c_s, length
L0 = c_s^2 / (2 pi G Sigma), time t0 = c_s / (2 pi G Sigma). With the
dimensionless wavenumber ``k`` (= k L0) the growth rate ``g`` (= gamma t0)
solves the cubic

    g^3 + theta g^2 + (D + Lambda) g + theta D = 0,

    D      = kappa^2 + C^2 k^2 - k
    Lambda = k / mu^2 + vA^2 k^2,          vA^2 = Z / mu^2
    theta  = eta (k / Z + k^2)

with Z = 2 / (1 + P), C^2 = (1 + 3P) / (1 + P)^2 and P = 2 P_ext / (pi G Sigma^2).

Everything here is plain numpy on float arrays that broadcast against each
other, so one call evaluates a whole ensemble of walkers. No Python loop runs
over parameter sets; the only loops are fixed-length iterations (Newton steps,
golden-section steps) applied to all sets at once.

:func:`fastest_mode` has two interchangeable paths: this module's numpy arrays
and a compiled loop over the sets (:mod:`infer.physics.kernel_compiled`, numba), which
runs the same algorithm with far less per-call overhead. The compiled one is
used when numba can be imported; choose with the ``kernel`` argument, with
:func:`set_kernel`, or with the environment variable ``INFER_KERNEL`` (``auto``,
``compiled`` or ``numpy``; read at the first call).
"""

from __future__ import annotations

import functools
import os
from dataclasses import dataclass

import numpy as np

from ..errors import InferError

__all__ = [
    "SheetParams",
    "sheet_params",
    "coefficients",
    "growth_rate",
    "unstable_band",
    "FastestMode",
    "fastest_mode",
    "thermal_fastest_k",
    "KERNEL_ENV",
    "KERNELS",
    "compiled_available",
    "set_kernel",
]

KERNEL_ENV = "INFER_KERNEL"               # environment variable choosing the fastest-mode path
KERNELS = ("auto", "compiled", "numpy")   # auto: compiled if numba imports, else numpy

_GOLDEN = 0.5 * (3.0 - np.sqrt(5.0))   # 0.381966...
_N_GRID = 8                           # coarse log-k scan that picks the start
_N_GOLDEN = 50                         # golden-section steps, fallback only (0.618^50 ~ 3e-11)
_N_POLISH = 12                         # cap on Newton steps in (g, k)
_N_NEWTON = 60                         # hard cap on Newton steps for the cubic root
_LOG_K_SPAN_NO_ROTATION = np.log(1e6)  # lower end of the band when kappa = 0
_ROUNDOFF = 1e-12                      # slack when comparing growth rates (the polish tolerance)
_PLATEAU = 0.1                         # scan points this close to the best get a second look


@dataclass(frozen=True)
class SheetParams:
    """Dimensionless parameters of the sheet, one entry per parameter set.

    Attributes
    ----------
    inv_mu2 : ndarray
        1 / mu0^2, mu0 the mass-to-flux ratio in units of the critical value
        (0 for a field-free sheet).
    p_ext : ndarray
        P = 2 P_ext / (pi G Sigma^2), external over self-gravitational pressure.
    kappa : ndarray
        Epicyclic frequency times t0 (Toomre Q = 2 kappa).
    eta : ndarray
        (eta_AD + eta_OD) t0 / L0^2, the total field-slip diffusivity.
    """

    inv_mu2: np.ndarray
    p_ext: np.ndarray
    kappa: np.ndarray
    eta: np.ndarray

    @property
    def z0(self) -> np.ndarray:
        """Half-thickness Z0 / L0 = 2 / (1 + P)."""
        return 2.0 / (1.0 + self.p_ext)

    @property
    def c2(self) -> np.ndarray:
        """Effective sound speed squared, C_eff^2 / c_s^2 = (1 + 3P) / (1 + P)^2."""
        return (1.0 + 3.0 * self.p_ext) / (1.0 + self.p_ext) ** 2

    @property
    def va2(self) -> np.ndarray:
        """Alfven speed squared at the midplane, v_A^2 / c_s^2 = Z0 / mu0^2."""
        return self.z0 * self.inv_mu2


def sheet_params(*, inv_mu2, p_ext=0.0, kappa=0.0, eta=0.0) -> SheetParams:
    """Broadcast the four dimensionless inputs to one common shape.

    Parameters
    ----------
    inv_mu2, p_ext, kappa, eta : array_like
        See :class:`SheetParams`; all must be finite and non-negative.
    """
    arrays = [np.asarray(x, dtype=float) for x in (inv_mu2, p_ext, kappa, eta)]
    shapes = [a.shape for a in arrays]
    if shapes.count(shapes[0]) != 4:        # (equal shapes, the sampler's case: no broadcast)
        arrays = np.broadcast_arrays(*arrays)
    return SheetParams(*(np.array(a, dtype=float) for a in arrays))


def coefficients(k, p: SheetParams):
    """Return (D, Lambda, theta) at dimensionless wavenumber ``k`` (k > 0).

    ``k`` broadcasts against the parameter arrays.
    """
    k = np.asarray(k, dtype=float)
    z0 = p.z0
    k2 = k * k
    d = p.kappa**2 + p.c2 * k2 - k
    lam = k * p.inv_mu2 + (z0 * p.inv_mu2) * k2
    theta = p.eta * (k / z0 + k2)
    return d, lam, theta


def _cubic_root(d, lam, theta):
    """Largest real growth rate of g^3 + theta g^2 + (D + Lambda) g + theta D = 0.

    Returns 0 where no mode grows. Exact in the two limits: theta = 0 gives
    g = sqrt(-(D + Lambda)); otherwise the unique positive root when D < 0
    (one sign change, Descartes), found by Newton's method from the smaller of
    two upper bounds, sqrt(-D) and the positive root of the quadratic part
    theta g^2 + (D + Lambda) g + theta D (at which the cubic equals g^3 > 0).
    The cubic is convex for g > 0, so Newton from above decreases monotonically
    to the root. Only the entries that have not converged are iterated.
    """
    d, lam, theta = np.broadcast_arrays(d, lam, theta)
    shape = d.shape
    d = d.reshape(-1)
    lam = lam.reshape(-1)
    theta = theta.reshape(-1)
    b = d + lam
    out = np.sqrt(np.maximum(-b, 0.0))          # flux-frozen limit
    diffusive = theta > 0.0
    out[diffusive] = 0.0
    idx = np.flatnonzero(diffusive & (d < 0.0))
    if idx.size:
        dd, bb, tt = d[idx], b[idx], theta[idx]
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            g1 = np.sqrt(-dd)
            s = np.sqrt(bb * bb - 4.0 * tt * tt * dd)
            gq = np.where(bb > 0.0, -2.0 * tt * dd / (s + bb), (s - bb) / (2.0 * tt))
        g = np.where(np.isfinite(gq), np.fmin(g1, gq), g1)
        g = _halley(g, tt, bb, dd)
        out[idx] = g
    return out.reshape(shape)


def _halley(g, tt, bb, dd):
    """Halley's method for the root of g^3 + tt g^2 + bb g + tt dd from the upper bounds ``g``.

    1-D arrays. Returns the root (a copy where iterated).
    """
    # a few Halley steps on all entries (cubic convergence; f'' > 0 and
    # f >= 0 above the root), then only on those still moving
    active = None
    for it in range(_N_NEWTON):
        if active is None:
            ga, ta, ba, da = g, tt, bb, dd
        else:
            ga, ta, ba, da = g[active], tt[active], bb[active], dd[active]
        g2 = ga * ga
        f = g2 * ga + ta * g2 + ba * ga + ta * da
        fp = 3.0 * g2 + 2.0 * ta * ga + ba
        fpp = 6.0 * ga + 2.0 * ta
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            step = 2.0 * f * fp / (2.0 * fp * fp - f * fpp)
        step = np.where(np.isfinite(step) & (fp > 0.0), step, 0.0)
        g_new = np.maximum(ga - step, 0.0)
        # from above the iterates decrease; a non-positive or round-off step means done
        keep = step > 1e-15 * ga
        if active is None:
            g = g_new
            if it >= 2:
                active = np.flatnonzero(keep)
        else:
            g[active] = g_new
            active = active[keep]
        if active is not None and active.size == 0:
            break
    return g


def growth_rate(k, p: SheetParams) -> np.ndarray:
    """Dimensionless growth rate gamma t0 of the fastest-growing branch at ``k``.

    Parameters
    ----------
    k : array_like
        Dimensionless wavenumber k L0 (> 0), broadcasting against ``p``.
    p : SheetParams

    Returns
    -------
    ndarray
        gamma t0 >= 0 (0 where no mode grows).
    """
    d, lam, theta = coefficients(k, p)
    return _cubic_root(d, lam, theta)


def unstable_band(p: SheetParams):
    """Closed-form band of wavenumbers that grow, and whether it exists.

    With diffusion (eta > 0) the band is D(k) < 0; in flux freezing (eta = 0)
    it is D + Lambda < 0. Both are quadratics a k^2 - b k + kappa^2 < 0.

    Returns
    -------
    k_lo, k_hi : ndarray
        Band edges (k_lo = 0 without rotation); NaN where no band.
    exists : ndarray of bool
    """
    ideal = p.eta <= 0.0
    a = np.where(ideal, p.c2 + p.va2, p.c2)
    bb = np.where(ideal, 1.0 - p.inv_mu2, 1.0)
    disc = bb * bb - 4.0 * a * p.kappa**2
    exists = (bb > 0.0) & (disc > 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        root = np.sqrt(np.where(exists, disc, np.nan))
        k_hi = (bb + root) / (2.0 * a)
        k_lo = 2.0 * p.kappa**2 / (bb + root)
    return k_lo, k_hi, exists


def thermal_fastest_k(p: SheetParams) -> np.ndarray:
    """Fastest wavenumber of the field-free, non-rotating sheet, k = 1 / (2 C^2)."""
    return 0.5 / p.c2


@dataclass(frozen=True)
class FastestMode:
    """Fastest-growing mode, dimensionless; NaN where nothing grows.

    Attributes
    ----------
    k : ndarray
        Wavenumber k_m L0.
    growth_rate : ndarray
        gamma_m t0.
    unstable : ndarray of bool
    k_lo, k_hi : ndarray
        Edges of the unstable band.
    """

    k: np.ndarray
    growth_rate: np.ndarray
    unstable: np.ndarray
    k_lo: np.ndarray
    k_hi: np.ndarray


def _flat(p: SheetParams, shape) -> SheetParams:
    return SheetParams(*(np.broadcast_to(a, shape).reshape(-1) for a in
                         (p.inv_mu2, p.p_ext, p.kappa, p.eta)))


def _take(p: SheetParams, idx) -> SheetParams:
    return SheetParams(p.inv_mu2[idx], p.p_ext[idx], p.kappa[idx], p.eta[idx])


def _polish(k, g, p: SheetParams, k_min, k_max):
    """Newton's method on (g, k) for p(g, k) = 0 and dp/dk = 0 (so dg/dk = 0).

    Implicit differentiation of the cubic p(g, k) = 0 gives dg/dk = -p_k / p_g,
    so the fastest mode is where p_k vanishes on the root. Steps are clipped to
    [k_min, k_max]. Large batches iterate only the entries still moving; small
    ones (a sampler's walkers) iterate all entries, which costs fewer numpy
    calls. Returns the polished k, g and a flag of clean convergence.
    """
    k = k.copy()
    g = g.copy()
    ok = np.zeros(k.shape, dtype=bool)
    m, eta, kap2 = p.inv_mu2, p.eta, p.kappa**2
    iz, c2 = 1.0 / p.z0, p.c2
    vv = p.va2
    b_kk = 2.0 * (c2 + vv)
    two_c2 = 2.0 * c2
    two_eta = 2.0 * eta
    compact = k.size > 256
    active = np.arange(k.size) if compact else None
    for _ in range(_N_POLISH):
        if compact:
            kk, gg = k[active], g[active]
            am, aeta, akap2, aiz, ac2, avv = (m[active], eta[active], kap2[active], iz[active],
                                              c2[active], vv[active])
            ab_kk, atwo_c2, atwo_eta = b_kk[active], two_c2[active], two_eta[active]
            lo, hi = k_min[active], k_max[active]
        else:
            kk, gg = k, g
            am, aeta, akap2, aiz, ac2, avv = m, eta, kap2, iz, c2, vv
            ab_kk, atwo_c2, atwo_eta = b_kk, two_c2, two_eta
            lo, hi = k_min, k_max
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            k2 = kk * kk
            th = aeta * (kk * aiz + k2)
            th_k = aeta * aiz + atwo_eta * kk
            d = akap2 + ac2 * k2 - kk
            d_k = atwo_c2 * kk - 1.0
            b = d + am * kk + avv * k2
            b_k = d_k + am + 2.0 * avv * kk
            g2 = gg * gg
            f = g2 * gg + th * g2 + b * gg + th * d
            f_g = 3.0 * g2 + 2.0 * th * gg + b
            f_k = th_k * (g2 + d) + b_k * gg + th * d_k
            f_kg = 2.0 * th_k * gg + b_k
            f_kk = atwo_eta * (g2 + d) + ab_kk * gg + 2.0 * th_k * d_k + atwo_c2 * th
            det = f_g * f_kk - f_k * f_kg
            dg = (f_k * f_k - f * f_kk) / det
            dk = (f_kg * f - f_g * f_k) / det
        good = np.isfinite(dg) & np.isfinite(dk)
        dg = np.where(good, dg, 0.0)
        dk = np.where(good, dk, 0.0)
        k_new = np.clip(kk + dk, lo, hi)
        g_new = np.maximum(gg + dg, 0.0)
        done = good & (np.abs(dk) <= 1e-12 * kk) & (np.abs(dg) <= 1e-12 * np.maximum(gg, 1e-300))
        # no further progress possible: a bad step, or pinned at a bracket edge and pushing out
        # (such entries are not ok and go to the fallback without more iterations)
        stuck = ~good | ((kk <= lo) & (dk <= 0.0)) | ((kk >= hi) & (dk >= 0.0))
        if compact:
            k[active] = k_new
            g[active] = g_new
            ok[active] = done
            active = active[~(done | stuck)]
            if active.size == 0:
                break
        else:
            k, g = k_new, g_new
            ok = done
            if np.all(done | stuck):
                break
    return k, g, ok


def _golden(a, b, p: SheetParams):
    """Golden-section maximisation of the growth rate over log k in [a, b]."""

    def f(x):
        return growth_rate(np.exp(x), p)

    x1 = a + _GOLDEN * (b - a)
    x2 = b - _GOLDEN * (b - a)
    f1, f2 = f(x1), f(x2)
    for _ in range(_N_GOLDEN):
        left = f1 >= f2
        b = np.where(left, x2, b)
        a = np.where(left, a, x1)
        x_new = np.where(left, a + _GOLDEN * (b - a), b - _GOLDEN * (b - a))
        f_new = f(x_new)
        x2, f2, x1, f1 = (np.where(left, x1, x_new), np.where(left, f1, f_new),
                          np.where(left, x_new, x2), np.where(left, f_new, f2))
    x = np.where(f1 >= f2, x1, x2)
    return np.exp(x), np.maximum(f1, f2)


def _scan_rates(k, p: SheetParams, n_anchor: int):
    """Growth rates at the scan wavenumbers ``k`` (one row per parameter set).

    Exact where they can matter. The last ``n_anchor`` columns are solved
    first; (1 - _PLATEAU) times their best rate is a threshold. Of the other
    columns only those whose upper bound (the smaller of sqrt(-D) and the
    root of the quadratic part, as in :func:`_cubic_root`) reaches the
    threshold are solved (about a quarter of them); the rest can be neither
    the maximum nor on its plateau, and keep the upper bound.
    Returns the rates and the mask of the exact ones.
    """
    d, lam, theta = np.broadcast_arrays(*coefficients(k, p))
    out = np.empty(d.shape)
    out[:, -n_anchor:] = _cubic_root(d[:, -n_anchor:], lam[:, -n_anchor:], theta[:, -n_anchor:])
    d, lam, theta = d[:, :-n_anchor], lam[:, :-n_anchor], theta[:, :-n_anchor]
    b = d + lam
    diffusive = (theta > 0.0) & (d < 0.0)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        s = np.sqrt(b * b - 4.0 * theta * theta * d)
        gq = np.where(b > 0.0, -2.0 * theta * d / (s + b), (s - b) / (2.0 * theta))
        up = np.where(np.isfinite(gq), np.fmin(np.sqrt(-d), gq), np.sqrt(-d))
    threshold = (1.0 - _PLATEAU) * out[:, -n_anchor:].max(axis=1, keepdims=True)
    need = diffusive & (up >= threshold)
    grid = np.where(diffusive, up, np.where(theta > 0.0, 0.0, np.sqrt(np.maximum(-b, 0.0))))
    grid[need] = _halley(up[need], theta[need], b[need], d[need])
    out[:, :-n_anchor] = grid
    exact = np.ones(out.shape, dtype=bool)
    exact[:, :-n_anchor] = need | ~diffusive
    return out, exact


def _refine(x0, g0, a, b, q: SheetParams, *, fallback: bool = True):
    """Polish the start (log k = x0, rate g0) inside the bracket [a, b] of log k.

    Newton's method on (g, k) first; where it does not end at a clean interior
    maximum at least as high as the start, golden section over the bracket
    (never below the start) and Newton again from its result, or with
    ``fallback=False`` just the start.
    Returns k and g.
    """
    k1, g1, ok = _polish(np.exp(x0), g0, q, np.exp(a), np.exp(b))
    g1 = np.where(ok, g1, 0.0)
    # (g1 may fall short of g0 by round-off when the start was already the peak;
    # with large theta the cubic is evaluated with ~eps * theta / g relative error)
    ok &= (k1 > np.exp(a)) & (k1 < np.exp(b)) & (g1 >= g0 * (1.0 - _ROUNDOFF))
    bad = np.flatnonzero(~ok)
    if bad.size and not fallback:
        k1[bad], g1[bad] = np.exp(x0[bad]), g0[bad]
    elif bad.size:
        qb, ka, kb_ = _take(q, bad), np.exp(a[bad]), np.exp(b[bad])
        kb, gb = _golden(a[bad], b[bad], qb)
        # golden section places a smooth maximum only to ~sqrt(eps) in k: Newton from there
        kp, gp, okp = _polish(kb, gb, qb, ka, kb_)
        okp &= (kp > ka) & (kp < kb_) & (gp >= gb * (1.0 - _ROUNDOFF))
        kb, gb = np.where(okp, kp, kb), np.where(okp, gp, gb)
        better = gb >= g0[bad]
        k1[bad] = np.where(better, kb, np.exp(x0[bad]))
        g1[bad] = np.where(better, gb, g0[bad])
    return k1, g1


_compiled_kernel = None     # the compiled function once loaded, False if numba is missing


def compiled_available() -> bool:
    """Whether the compiled path can be used (numba importable); loads it on first call."""
    global _compiled_kernel
    if _compiled_kernel is None:
        try:
            from .kernel_compiled import TUNING, fastest_mode_arrays
        except ImportError:
            _compiled_kernel = False
        else:
            _compiled_kernel = functools.partial(fastest_mode_arrays, TUNING)
    return _compiled_kernel is not False


def fastest_mode(p: SheetParams, *, kernel: str | None = None) -> FastestMode:
    """Locate the maximum of the growth rate over the unstable band.

    1. A scan of the growth rate on ``_N_GRID`` logarithmically spaced
       wavenumbers across the closed-form band, plus two analytic candidates
       (the flux-frozen peak and the field-free peak), picks the best start;
       this guards against a second local maximum near the critical
       mass-to-flux ratio. Scan points whose upper bound cannot come within
       ``_PLATEAU`` of the analytic candidates are not solved exactly.
    2. Newton's method on (g, k) for p = 0, dp/dk = 0 polishes it
       (quadratic convergence, implicit differentiation of the cubic).
    3. Where that fails to converge inside the bracket of neighbouring grid
       cells, a golden-section search in log k over that bracket is used,
       and Newton's method again from its result (golden section alone places
       a smooth maximum only to ~sqrt(eps) relative in k).
    4. Where the scan shows a second local maximum outside that bracket (or
       a flat top: a point within ``_PLATEAU`` of the best), that start is
       refined too and the higher of the two results is kept; near the
       critical mass-to-flux ratio two peaks can differ by < 1 % in height.
    5. Just above the critical mass-to-flux ratio with weak diffusion, the
       flux-frozen peak can lie below the scan; there a second scan below it
       is refined too.

    Two paths run these steps and agree to round-off (tests/test_kernel_paths.py):
    numpy arrays, all parameter sets advancing together (no Python loop over
    sets), and a compiled loop over the sets (:mod:`infer.physics.kernel_compiled`), which
    compiles at its first use in a fresh install (a few seconds; then it is
    cached on disk) and costs far less per call.

    Parameters
    ----------
    p : SheetParams
        Any shape.
    kernel : {"auto", "compiled", "numpy"}, optional
        Which path computes it; default: as set by :func:`set_kernel`, else the
        environment variable ``INFER_KERNEL`` as read at the first call, else
        "auto" (compiled when numba can be imported, else numpy).

    Returns
    -------
    FastestMode
        Arrays of the shape of ``p``.

    Raises
    ------
    InferError
        For an unknown ``kernel`` (or ``INFER_KERNEL``), or "compiled" without numba.
    """
    if kernel is None:
        kernel = _default_kernel or _read_default_kernel()
    if kernel == "numpy":
        return _fastest_mode_numpy(p)
    if kernel not in KERNELS:
        raise InferError(f"unknown fastest-mode kernel {kernel!r} (argument kernel= or "
                         f"environment variable {KERNEL_ENV}); pass one of {', '.join(KERNELS)}")
    if _compiled_kernel or compiled_available():
        return _fastest_mode_compiled(p)
    if kernel == "auto":
        return _fastest_mode_numpy(p)
    raise InferError(f"the compiled fastest-mode kernel needs numba, which cannot be imported; "
                     f"install numba or choose kernel='numpy' ({KERNEL_ENV}=numpy)")


_default_kernel = None      # INFER_KERNEL as read at the first call (saves ~1 us per call)


def _read_default_kernel() -> str:
    global _default_kernel
    _default_kernel = os.environ.get(KERNEL_ENV, "auto") or "auto"
    return _default_kernel


def set_kernel(kernel: str | None) -> None:
    """Set the path :func:`fastest_mode` takes when called without ``kernel=``.

    Parameters
    ----------
    kernel : {"auto", "compiled", "numpy"} or None
        None: read the environment variable ``INFER_KERNEL`` again at the next call.

    Raises
    ------
    InferError
        For an unknown name.
    """
    global _default_kernel
    if kernel is not None and kernel not in KERNELS:
        raise InferError(f"unknown fastest-mode kernel {kernel!r}; pass one of {', '.join(KERNELS)}")
    _default_kernel = kernel


_F8 = np.dtype(np.float64)


def _fastest_mode_compiled(p: SheetParams) -> FastestMode:
    """:func:`fastest_mode` by the compiled loop: one call for all sets.

    The compiled function takes 1-D contiguous float64 arrays of one length (it
    raises TypeError or ValueError for anything else); the usual input (from
    :func:`sheet_params`, 1-D) is passed as it is, so a call on a sampler's batch
    costs little more than the arithmetic. Other shapes are flattened first.
    """
    arrays = m, pe, ka, et = p.inv_mu2, p.p_ext, p.kappa, p.eta
    if (getattr(m, "ndim", 0) == 1 and getattr(pe, "ndim", 0) == 1 and getattr(ka, "ndim", 0) == 1
            and getattr(et, "ndim", 0) == 1):
        try:
            k, g, grows, k_lo, k_hi = _compiled_kernel(m, pe, ka, et)
        except (TypeError, ValueError):     # another dtype or layout, or unequal lengths
            pass
        else:
            return FastestMode(k=k, growth_rate=g, unstable=grows, k_lo=k_lo, k_hi=k_hi)
    shapes = [np.shape(a) for a in arrays]
    shape = shapes[0] if shapes.count(shapes[0]) == 4 else np.broadcast_shapes(*shapes)
    flat = [np.ascontiguousarray(a if s == shape else np.broadcast_to(a, shape),
                                 dtype=_F8).reshape(-1) for a, s in zip(arrays, shapes, strict=True)]
    k, g, grows, k_lo, k_hi = _compiled_kernel(*flat)
    return FastestMode(k=k.reshape(shape), growth_rate=g.reshape(shape),
                       unstable=grows.reshape(shape), k_lo=k_lo.reshape(shape),
                       k_hi=k_hi.reshape(shape))


def _fastest_mode_numpy(p: SheetParams) -> FastestMode:
    """Locate the maximum of the growth rate over the unstable band (numpy arrays).

    All parameter sets advance together; no Python loop over sets. See
    :func:`fastest_mode` for the steps.
    """
    k_lo, k_hi, exists = unstable_band(p)
    shape = k_lo.shape
    fl = _flat(p, shape)
    ex = exists.reshape(-1)
    out_k = np.full(ex.shape, np.nan)
    out_g = np.full(ex.shape, np.nan)
    idx = np.flatnonzero(ex)
    if idx.size:
        q = _take(fl, idx)
        hi = np.log(k_hi.reshape(-1)[idx])
        klo = k_lo.reshape(-1)[idx]
        lo = np.where(klo > 0.0, np.log(np.where(klo > 0.0, klo, 1.0)), hi - _LOG_K_SPAN_NO_ROTATION)
        lo = np.maximum(lo, hi - _LOG_K_SPAN_NO_ROTATION)
        frac = (np.arange(_N_GRID) + 0.5) / _N_GRID
        cell = (hi - lo) / _N_GRID
        # analytic candidates: flux-frozen peak and decoupled (field-free) peak
        bb = 1.0 - q.inv_mu2
        with np.errstate(invalid="ignore", divide="ignore"):
            k_ideal = np.log(np.where(bb > 0.0, bb / (2.0 * (q.c2 + q.va2)), np.nan))
        k_free = np.log(0.5 / q.c2)
        cand = np.concatenate(
            [lo[:, None] + (hi - lo)[:, None] * frac[None, :],
             np.clip(np.stack([k_ideal, k_free], axis=1), lo[:, None], hi[:, None])],
            axis=1,
        )
        cand = np.where(np.isfinite(cand), cand, lo[:, None] + 0.5 * (hi - lo)[:, None])
        qq = SheetParams(*(a[:, None] for a in (q.inv_mu2, q.p_ext, q.kappa, q.eta)))
        g_c, exact = _scan_rates(np.exp(cand), qq, 2)
        best = np.argmax(g_c, axis=1)
        rows = np.arange(idx.size)
        x0 = cand[rows, best]
        g0 = g_c[rows, best]
        k1, g1 = _refine(x0, g0, np.maximum(x0 - cell, lo), np.minimum(x0 + cell, hi), q)
        # Near the critical mass-to-flux ratio the curve can have two peaks of almost equal
        # height, or a flat top with two bumps, and the best scan point may sit by the
        # lower one. Outside the first bracket, refine a second start too -- the best
        # other local maximum of the scan (with the golden-section fallback, as Newton may
        # land on the dip between the peaks) or else the best scan point within _PLATEAU
        # of the best one (Newton only) -- and keep the higher result.
        gg = g_c[:, :_N_GRID]
        outside = exact[:, :_N_GRID] & (gg > 0.0) & (np.abs(cand[:, :_N_GRID] - x0[:, None])
                                                     > cell[:, None] * (1.0 + 1e-9))
        local = outside.copy()
        local[:, 1:] &= gg[:, 1:] >= gg[:, :-1]
        local[:, :-1] &= gg[:, :-1] >= gg[:, 1:]
        flat = outside & (gg >= (1.0 - _PLATEAU) * g0[:, None])
        for mask, fallback in ((local, True), (flat & ~local.any(axis=1)[:, None], False)):
            two = np.flatnonzero(mask.any(axis=1))
            if not two.size:
                continue
            j = np.argmax(np.where(mask[two], gg[two], -np.inf), axis=1)
            x2, g2, c2 = cand[two, j], gg[two, j], cell[two]
            k2, g2 = _refine(x2, g2, np.maximum(x2 - c2, lo[two]), np.minimum(x2 + c2, hi[two]),
                             _take(q, two), fallback=fallback)
            take = g2 > g1[two]
            k1[two] = np.where(take, k2, k1[two])
            g1[two] = np.where(take, g2, g1[two])
        # Just above the critical mass-to-flux ratio (mu0 - 1 below ~1e-5) with weak
        # diffusion, the flux-frozen peak near k ~ 1 - mu0^-2 can lie below the scan's
        # lower end (where that end is the span's limit, not the band's edge). For those
        # (few) sets, scan and refine [k_ideal / e^2, lower end] too (never below the band)
        # and keep the higher result.
        lo_band = np.where(klo > 0.0, np.log(np.where(klo > 0.0, klo, 1.0)), -np.inf)
        ext = np.flatnonzero((k_ideal - 1.0 < lo) & (lo_band < lo))  # NaN compares False
        if ext.size:
            qe = _take(q, ext)
            a = np.maximum(k_ideal[ext] - 2.0, lo_band[ext])
            b = lo[ext] + cell[ext]
            ce = (b - a) / _N_GRID
            xs = np.concatenate([a[:, None] + (b - a)[:, None] * frac[None, :],
                                 np.clip(k_ideal[ext], a, b)[:, None]], axis=1)
            ge, _ = _scan_rates(np.exp(xs), SheetParams(
                *(v[:, None] for v in (qe.inv_mu2, qe.p_ext, qe.kappa, qe.eta))), 1)
            j = np.argmax(ge, axis=1)
            r = np.arange(ext.size)
            ke, gke = _refine(xs[r, j], ge[r, j], np.maximum(xs[r, j] - ce, a),
                              np.minimum(xs[r, j] + ce, b), qe)
            take = gke > g1[ext]
            k1[ext] = np.where(take, ke, k1[ext])
            g1[ext] = np.where(take, gke, g1[ext])
        grows = g1 > 0.0
        out_k[idx] = np.where(grows, k1, np.nan)
        out_g[idx] = np.where(grows, g1, np.nan)
    unstable = np.isfinite(out_g)
    return FastestMode(
        k=out_k.reshape(shape),
        growth_rate=out_g.reshape(shape),
        unstable=unstable.reshape(shape),
        k_lo=np.where(exists, k_lo, np.nan),
        k_hi=np.where(exists, k_hi, np.nan),
    )

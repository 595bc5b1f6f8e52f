"""Compiled (numba) fastest-mode kernel: the algorithm of :func:`infer.physics.dispersion.fastest_mode`.

One call loops over all parameter sets inside machine code, so a sampler's
batch of 16-32 walkers costs a few microseconds instead of the ~100 numpy
calls of the array path, and large batches run several times faster too.
The steps, constants, tolerances and the order of the floating-point
operations are those of the numpy path in :mod:`infer.physics.dispersion` (scan,
Newton polish in (g, k), golden-section fallback, second-peak and low-k
extension checks), so both give the same numbers to round-off; the test
``tests/test_kernel_paths.py`` holds them to 1e-12.

The entry point :func:`fastest_mode_arrays` has a fixed signature, so it compiles
when this module is first imported (at the first compiled fastest_mode call), and
is cached on disk (``cache=True``), so later processes only load it. ``error_model="numpy"``
gives IEEE results (inf, NaN) for a division by zero, as numpy does, where
Python semantics would raise.

Import this module only through :func:`infer.physics.dispersion.fastest_mode`, which
falls back to the numpy path when numba is not installed.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from . import dispersion

__all__ = ["TUNING", "fastest_mode_arrays"]

_JIT = dict(cache=True, error_model="numpy", nogil=True)

# The tuning constants of infer.physics.dispersion, passed to the compiled code as an array at
# every call rather than frozen into it: numba's on-disk cache is keyed on this file only,
# so a constant compiled in from infer.physics.dispersion would survive a change there.
_NAMES = ("_N_GRID", "_N_GOLDEN", "_N_POLISH", "_N_NEWTON", "_LOG_K_SPAN_NO_ROTATION",
          "_ROUNDOFF", "_PLATEAU", "_GOLDEN")
_GRID, _NGOLD, _NPOL, _NNEWT, _SPAN, _ROUND, _PLAT, _GOLD = range(len(_NAMES))
TUNING = np.array([float(getattr(dispersion, name)) for name in _NAMES])


@njit(**_JIT)
def _max0(x):
    """max(x, 0) that keeps NaN, like numpy.maximum(x, 0.0)."""
    return 0.0 if x < 0.0 else x


@njit(**_JIT)
def _halley(g, t, b, d, tun):
    """Root of g^3 + t g^2 + b g + t d from the upper bound ``g`` (as dispersion._halley)."""
    for it in range(int(tun[_NNEWT])):
        g2 = g * g
        f = g2 * g + t * g2 + b * g + t * d
        fp = 3.0 * g2 + 2.0 * t * g + b
        fpp = 6.0 * g + 2.0 * t
        step = 2.0 * f * fp / (2.0 * fp * fp - f * fpp)
        if not (math.isfinite(step) and fp > 0.0):
            step = 0.0
        keep = step > 1e-15 * g
        g = _max0(g - step)
        if it >= 2 and not keep:
            break
    return g


@njit(**_JIT)
def _coefficients(k, m, c2, z0, kap2, eta):
    """(D, Lambda, theta) at wavenumber k (as dispersion.coefficients)."""
    k2 = k * k
    d = kap2 + c2 * k2 - k
    lam = k * m + (z0 * m) * k2
    theta = eta * (k / z0 + k2)
    return d, lam, theta


@njit(**_JIT)
def _upper(d, b, t):
    """The smaller of sqrt(-D) and the positive root of the quadratic part (D < 0, t > 0)."""
    g1 = math.sqrt(-d)
    s = math.sqrt(b * b - 4.0 * t * t * d)
    if b > 0.0:
        gq = -2.0 * t * d / (s + b)
    else:
        gq = (s - b) / (2.0 * t)
    if math.isfinite(gq):
        return min(g1, gq)       # both non-NaN here, as numpy.fmin
    return g1


@njit(**_JIT)
def _root(d, lam, t, tun):
    """Largest real growth rate of the cubic, 0 where none grows (as dispersion._cubic_root)."""
    b = d + lam
    if t > 0.0:
        if d < 0.0:
            return _halley(_upper(d, b, t), t, b, d, tun)
        return 0.0
    return math.sqrt(_max0(-b))


@njit(**_JIT)
def _rate(k, m, c2, z0, kap2, eta, tun):
    d, lam, t = _coefficients(k, m, c2, z0, kap2, eta)
    return _root(d, lam, t, tun)


@njit(**_JIT)
def _scan(x, n_anchor, out, exact, m, c2, z0, kap2, eta, tun):
    """Growth rates at k = exp(x) into ``out``, exact where they can matter (as _scan_rates)."""
    n = x.size
    best = -np.inf
    for j in range(n - n_anchor, n):
        d, lam, t = _coefficients(math.exp(x[j]), m, c2, z0, kap2, eta)
        out[j] = _root(d, lam, t, tun)
        exact[j] = True
        if out[j] > best or math.isnan(out[j]):
            best = out[j]
    threshold = (1.0 - tun[_PLAT]) * best
    for j in range(n - n_anchor):
        d, lam, t = _coefficients(math.exp(x[j]), m, c2, z0, kap2, eta)
        b = d + lam
        if t > 0.0 and d < 0.0:
            up = _upper(d, b, t)
            if up >= threshold:
                out[j] = _halley(up, t, b, d, tun)
                exact[j] = True
            else:
                out[j] = up
                exact[j] = False
        else:
            out[j] = 0.0 if t > 0.0 else math.sqrt(_max0(-b))
            exact[j] = True


@njit(**_JIT)
def _polish(k, g, lo, hi, m, c2, z0, kap2, eta, tun):
    """Newton's method on (g, k) for p = 0, dp/dk = 0 inside [lo, hi] (as dispersion._polish)."""
    iz = 1.0 / z0
    vv = z0 * m
    b_kk = 2.0 * (c2 + vv)
    two_c2 = 2.0 * c2
    two_eta = 2.0 * eta
    ok = False
    for _ in range(int(tun[_NPOL])):
        k2 = k * k
        th = eta * (k * iz + k2)
        th_k = eta * iz + two_eta * k
        d = kap2 + c2 * k2 - k
        d_k = two_c2 * k - 1.0
        b = d + m * k + vv * k2
        b_k = d_k + m + 2.0 * vv * k
        g2 = g * g
        f = g2 * g + th * g2 + b * g + th * d
        f_g = 3.0 * g2 + 2.0 * th * g + b
        f_k = th_k * (g2 + d) + b_k * g + th * d_k
        f_kg = 2.0 * th_k * g + b_k
        f_kk = two_eta * (g2 + d) + b_kk * g + 2.0 * th_k * d_k + two_c2 * th
        det = f_g * f_kk - f_k * f_kg
        dg = (f_k * f_k - f * f_kk) / det
        dk = (f_kg * f - f_g * f_k) / det
        good = math.isfinite(dg) and math.isfinite(dk)
        if not good:
            dg = 0.0
            dk = 0.0
        k_new = min(max(k + dk, lo), hi)
        g_new = _max0(g + dg)
        ok = good and abs(dk) <= 1e-12 * k and abs(dg) <= 1e-12 * max(g, 1e-300)
        stuck = (not good) or (k <= lo and dk <= 0.0) or (k >= hi and dk >= 0.0)
        k = k_new
        g = g_new
        if ok or stuck:
            break
    return k, g, ok


@njit(**_JIT)
def _golden(a, b, m, c2, z0, kap2, eta, tun):
    """Golden-section maximisation over log k in [a, b] (as dispersion._golden)."""
    gold = tun[_GOLD]
    x1 = a + gold * (b - a)
    x2 = b - gold * (b - a)
    f1 = _rate(math.exp(x1), m, c2, z0, kap2, eta, tun)
    f2 = _rate(math.exp(x2), m, c2, z0, kap2, eta, tun)
    for _ in range(int(tun[_NGOLD])):
        if f1 >= f2:
            b = x2
            x_new = a + gold * (b - a)
            f_new = _rate(math.exp(x_new), m, c2, z0, kap2, eta, tun)
            x2, f2, x1, f1 = x1, f1, x_new, f_new
        else:
            a = x1
            x_new = b - gold * (b - a)
            f_new = _rate(math.exp(x_new), m, c2, z0, kap2, eta, tun)
            x2, f2, x1, f1 = x_new, f_new, x2, f2
    if f1 >= f2:
        return math.exp(x1), f1
    return math.exp(x2), f2


@njit(**_JIT)
def _refine(x0, g0, a, b, fallback, m, c2, z0, kap2, eta, tun):
    """Polish the start inside [a, b] of log k; golden section + polish where that fails (as _refine)."""
    ka = math.exp(a)
    kb = math.exp(b)
    k1, g1, ok = _polish(math.exp(x0), g0, ka, kb, m, c2, z0, kap2, eta, tun)
    if not ok:
        g1 = 0.0
    if ok and k1 > ka and k1 < kb and g1 >= g0 * (1.0 - tun[_ROUND]):
        return k1, g1
    if not fallback:
        return math.exp(x0), g0
    k_g, g_g = _golden(a, b, m, c2, z0, kap2, eta, tun)
    k_p, g_p, ok = _polish(k_g, g_g, ka, kb, m, c2, z0, kap2, eta, tun)
    if ok and k_p > ka and k_p < kb and g_p >= g_g * (1.0 - tun[_ROUND]):
        k_g, g_g = k_p, g_p
    if g_g >= g0:
        return k_g, g_g
    return math.exp(x0), g0


@njit(**_JIT)
def _band(m, c2, va2, kap2, eta):
    """Closed-form unstable band (as dispersion.unstable_band); NaN edges where none."""
    ideal = eta <= 0.0
    a = c2 + va2 if ideal else c2
    bb = 1.0 - m if ideal else 1.0
    disc = bb * bb - 4.0 * a * kap2
    if bb > 0.0 and disc > 0.0:
        root = math.sqrt(disc)
        return 2.0 * kap2 / (bb + root), (bb + root) / (2.0 * a), True
    return np.nan, np.nan, False


@njit(**_JIT)
def _one(m, c2, z0, kap2, eta, klo, khi, cand, g_c, exact, xs, ge, ex, tun):
    """Fastest mode (k, g) of one set with band [klo, khi] (as dispersion.fastest_mode).

    ``cand`` ... ``ex`` are scratch arrays (scan points, rates and exactness flags).
    """
    va2 = z0 * m
    n_grid = cand.size - 2
    span = tun[_SPAN]
    hi = math.log(khi)
    lo = math.log(klo) if klo > 0.0 else hi - span
    lo = max(lo, hi - span)
    cell = (hi - lo) / n_grid
    bb = 1.0 - m
    k_ideal = math.log(bb / (2.0 * (c2 + va2))) if bb > 0.0 else np.nan
    for j in range(n_grid):
        cand[j] = lo + (hi - lo) * ((j + 0.5) / n_grid)
    cand[n_grid] = min(max(k_ideal, lo), hi) if not math.isnan(k_ideal) else np.nan
    cand[n_grid + 1] = min(max(math.log(0.5 / c2), lo), hi)
    for j in range(n_grid + 2):
        if not math.isfinite(cand[j]):
            cand[j] = lo + 0.5 * (hi - lo)
    _scan(cand, 2, g_c, exact, m, c2, z0, kap2, eta, tun)
    best = 0
    for j in range(1, n_grid + 2):
        if g_c[j] > g_c[best]:
            best = j
    x0 = cand[best]
    g0 = g_c[best]
    k1, g1 = _refine(x0, g0, max(x0 - cell, lo), min(x0 + cell, hi), True,
                     m, c2, z0, kap2, eta, tun)
    # second start outside the first bracket: the best other local maximum of the scan,
    # else the best scan point within _PLATEAU of the best one (see dispersion.fastest_mode)
    j_loc = -1
    j_flat = -1
    for j in range(n_grid):
        gj = g_c[j]
        if not (exact[j] and gj > 0.0 and abs(cand[j] - x0) > cell * (1.0 + 1e-9)):
            continue
        if ((j == 0 or gj >= g_c[j - 1]) and (j == n_grid - 1 or gj >= g_c[j + 1])
                and (j_loc < 0 or gj > g_c[j_loc])):
            j_loc = j
        if gj >= (1.0 - tun[_PLAT]) * g0 and (j_flat < 0 or gj > g_c[j_flat]):
            j_flat = j
    j2 = j_loc if j_loc >= 0 else j_flat
    if j2 >= 0:
        x2 = cand[j2]
        k2, g2 = _refine(x2, g_c[j2], max(x2 - cell, lo), min(x2 + cell, hi), j_loc >= 0,
                         m, c2, z0, kap2, eta, tun)
        if g2 > g1:
            k1, g1 = k2, g2
    # flux-frozen peak below the scan's lower end, just above the critical mass-to-flux ratio
    lo_band = math.log(klo) if klo > 0.0 else -np.inf
    if k_ideal - 1.0 < lo and lo_band < lo:
        a = max(k_ideal - 2.0, lo_band)
        b = lo + cell
        ce = (b - a) / n_grid
        for j in range(n_grid):
            xs[j] = a + (b - a) * ((j + 0.5) / n_grid)
        xs[n_grid] = min(max(k_ideal, a), b)
        _scan(xs, 1, ge, ex, m, c2, z0, kap2, eta, tun)
        j = 0
        for i in range(1, n_grid + 1):
            if ge[i] > ge[j]:
                j = i
        ke, gke = _refine(xs[j], ge[j], max(xs[j] - ce, a), min(xs[j] + ce, b), True,
                          m, c2, z0, kap2, eta, tun)
        if gke > g1:
            k1, g1 = ke, gke
    return k1, g1


_VEC = "float64[::1]"


@njit(f"({', '.join([_VEC] * 5)},)", **_JIT)
def fastest_mode_arrays(tun, inv_mu2, p_ext, kappa, eta):
    """Fastest mode of every set of 1-D contiguous float64 arrays of equal length.

    ``tun`` is :data:`TUNING` (the constants of :mod:`infer.physics.dispersion`). Other array
    types raise TypeError (the signature is fixed, so nothing new is compiled), and
    unequal lengths ValueError.

    Returns
    -------
    k, g : ndarray
        Wavenumber and growth rate of the fastest mode (NaN where nothing grows),
        dimensionless (docs/physics.md, "Dimensionless form").
    unstable : ndarray of bool
        Where a mode grows.
    k_lo, k_hi : ndarray
        Edges of the unstable band (NaN where there is none).
    """
    n = inv_mu2.size
    if p_ext.size != n or kappa.size != n or eta.size != n:
        raise ValueError("fastest_mode_arrays: the parameter arrays differ in length")
    n_grid = int(tun[_GRID])
    k_out = np.full(n, np.nan)
    g_out = np.full(n, np.nan)
    grows = np.zeros(n, dtype=np.bool_)
    lo_out = np.full(n, np.nan)
    hi_out = np.full(n, np.nan)
    cand = np.empty(n_grid + 2)
    g_c = np.empty(n_grid + 2)
    exact = np.empty(n_grid + 2, dtype=np.bool_)
    xs = np.empty(n_grid + 1)
    ge = np.empty(n_grid + 1)
    ex = np.empty(n_grid + 1, dtype=np.bool_)
    for i in range(n):
        m = inv_mu2[i]
        pe = p_ext[i]
        c2 = (1.0 + 3.0 * pe) / ((1.0 + pe) * (1.0 + pe))
        z0 = 2.0 / (1.0 + pe)
        kap2 = kappa[i] * kappa[i]
        klo, khi, exists = _band(m, c2, z0 * m, kap2, eta[i])
        if not exists:
            continue
        lo_out[i] = klo
        hi_out[i] = khi
        k1, g1 = _one(m, c2, z0, kap2, eta[i], klo, khi, cand, g_c, exact, xs, ge, ex, tun)
        if g1 > 0.0:
            k_out[i] = k1
            g_out[i] = g1
            grows[i] = True
    return k_out, g_out, grows, lo_out, hi_out

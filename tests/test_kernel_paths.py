"""The two fastest-mode paths (compiled loop and numpy arrays) against each other and references.

* On the extreme box of tests/test_kernel_extremes.py (1e5 random sets) both paths give
  the same fastest mode: to 1e-12 relative in wavenumber and growth rate wherever the
  growth rate is defined that well in floating point (noise bound of that file), and
  within that noise elsewhere.
* The compiled path's growth rate at its wavenumber is the largest real root that
  numpy.roots finds for the cubic (reference library), and its fastest mode matches a
  dense grid plus scipy.optimize.minimize_scalar (reference library; the checks of
  tests/test_dispersion.py), for both paths.
* Batches of any shape, size 0 and 1, and the choice of path (argument, environment
  variable, numba missing).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from infer.errors import InferError
from infer.physics import dispersion as dp

HERE = Path(__file__).parent
sys.path.insert(0, str(HERE))
import test_dispersion as td  # noqa: E402
import test_kernel_extremes as tx  # noqa: E402

pytestmark = pytest.mark.skipif(not dp.compiled_available(), reason="numba is not installed")

N_BOX = 100_000
TOL = 1e-12


def both(p):
    return dp.fastest_mode(p, kernel="compiled"), dp.fastest_mode(p, kernel="numpy")


def flat_top_bound(k, p, g, eps_g):
    """Relative uncertainty of the wavenumber of a maximum whose height is known to eps_g.

    Near the maximum g(k) ~ g_m + g'' (k - k_m)^2 / 2, so a relative error eps_g in the
    growth rate leaves k undetermined by sqrt(2 eps_g g / |g''|). Implicit
    differentiation of the cubic p(g, k) = 0 at dg/dk = 0 gives g'' = -p_kk / p_g
    (coefficients of docs/physics.md, "Dimensionless form", written out here).
    """
    z0, c2, eta = 2 / (1 + p.p_ext), (1 + 3 * p.p_ext) / (1 + p.p_ext) ** 2, p.eta
    va2 = z0 * p.inv_mu2
    d = p.kappa**2 + c2 * k**2 - k
    b = d + k * p.inv_mu2 + va2 * k**2
    theta = eta * (k / z0 + k**2)
    theta_k = eta * (1 / z0 + 2 * k)
    d_k = 2 * c2 * k - 1
    p_g = 3 * g**2 + 2 * theta * g + b
    p_kk = 2 * eta * (g**2 + d) + 2 * (c2 + va2) * g + 2 * theta_k * d_k + 2 * c2 * theta
    return np.sqrt(2 * eps_g * np.abs(p_g) * g / (np.abs(p_kk) * k**2))


@pytest.fixture(scope="module")
def box():
    c = tx.draw(N_BOX, seed=20250321)
    p = tx.dimensionless(c, np.arange(N_BOX))
    return p, *both(p)


def test_paths_agree_on_the_extreme_box(box):
    p, fc, fn = box
    assert np.array_equal(fc.unstable, fn.unstable)
    assert 0.3 < fn.unstable.mean() < 0.9
    # the band is closed-form: the same few operations on both paths
    for name in ("k_lo", "k_hi"):
        np.testing.assert_allclose(getattr(fc, name), getattr(fn, name), rtol=1e-14, atol=0)
    u = fn.unstable
    k, g = fn.k[u], fn.growth_rate[u]
    q = dp.SheetParams(*(getattr(p, a)[u] for a in ("inv_mu2", "p_ext", "kappa", "eta")))
    dk = np.abs(fc.k[u] / k - 1)
    dg = np.abs(fc.growth_rate[u] / g - 1)
    # The paths differ only in the last bit of exp/log (numpy's SIMD routines vs the C
    # library), so where the growth rate is defined to better than 1e-12 they agree to
    # 1e-12. That is nearly every set; the rest lie within ~1e-6 of a stability limit,
    # where D + Lambda cancels and the rate itself carries rounding noise (noise bound of
    # tests/test_kernel_extremes.py); there the paths agree within that noise, and k
    # within the flat-top bound it implies (measured: at most a third of it). The box puts
    # ~8 % of the rotating sets within 1e-2 of the Toomre limit by design, so "nearly every
    # set" is ~95 % here.
    rel = tx.noise(k, q, g)
    well = rel < TOL
    assert well.mean() > 0.9
    assert np.all(dk[well] <= TOL) and np.all(dg[well] <= TOL)
    assert np.all(dg <= TOL + 2 * rel)
    assert np.all(dk <= TOL + flat_top_bound(k, q, g, rel))
    # most sets are bit-for-bit the same
    assert np.mean((dk == 0) & (dg == 0)) > 0.95


def test_compiled_rate_is_the_largest_root_of_the_cubic(box):
    p, fc, _ = box
    rng = np.random.default_rng(5)
    j = rng.choice(np.flatnonzero(fc.unstable), 1000, replace=False)
    q = dp.SheetParams(*(getattr(p, a)[j] for a in ("inv_mu2", "p_ext", "kappa", "eta")))
    k, g = fc.k[j], fc.growth_rate[j]
    d, lam, theta = dp.coefficients(k, q)      # checked against docs/physics.md in test_dispersion
    b = d + lam
    raw = np.array([np.roots([1.0, t, bb, t * dd]).real.max()
                    for t, bb, dd in zip(theta, b, d, strict=True)])
    # tolerances as in tests/test_kernel_extremes.py: numpy.roots is backward stable
    # (error ~eps times the largest root modulus); two Newton steps on the same cubic
    # remove that error, leaving the evaluation noise of the slow root
    rel = tx.noise(k, q, g)
    assert np.all(np.abs(g - raw) <= (1e-8 + 2 * rel) * g + 64 * tx.EPS * tx.root_scale(theta, b, d))
    ref = raw.copy()
    for _ in range(2):
        ref -= (((ref + theta) * ref + b) * ref + theta * d) / ((3 * ref + 2 * theta) * ref + b)
    assert np.all(np.abs(g - ref) <= (1e-8 + 2 * rel) * g)
    well = rel < TOL
    assert well.mean() > 0.9
    assert np.all(np.abs(g - ref)[well] <= 1e-10 * g[well])


@pytest.mark.parametrize("kernel", ["compiled", "numpy"])
def test_fastest_mode_against_scipy(kernel, monkeypatch):
    # the reference of tests/test_dispersion.py (dense grid of companion-matrix roots, then
    # scipy.optimize.minimize_scalar), random sets and the sets with two close peaks
    monkeypatch.setattr(dp, "_default_kernel", None)      # restored afterwards
    dp.set_kernel(kernel)
    mu0, p_ext, kappa, eta, _ = td.random_sets(150, seed=41, ideal_fraction=0.15)
    assert td.check_against_scipy(mu0, p_ext, kappa, eta).sum() > 70
    td.check_against_scipy(*td.TWO_PEAKS.T)


def small(p, idx):
    return dp.SheetParams(*(getattr(p, a)[idx] for a in ("inv_mu2", "p_ext", "kappa", "eta")))


def assert_same(fc, fn, tol=TOL):
    for name in ("unstable", "k", "growth_rate", "k_lo", "k_hi"):
        a, b = getattr(fc, name), getattr(fn, name)
        assert a.shape == b.shape, name
        if name == "unstable":
            assert np.array_equal(a, b)
        else:
            np.testing.assert_allclose(a, b, rtol=tol, atol=0, err_msg=name)


def test_paths_agree_on_walker_sized_batches_of_any_shape(box):
    p, _, _ = box
    rng = np.random.default_rng(9)
    for n in (1, 2, 16, 32):
        idx = rng.choice(N_BOX, n, replace=False)
        q = small(p, idx)
        fc, fn = both(q)
        # batch of n: same as the large batch and the other path (entries with a
        # noise-limited rate excluded, as above)
        grow = fn.unstable
        ok = ~grow
        ok[grow] = tx.noise(fn.k[grow], small(q, grow), fn.growth_rate[grow]) < TOL
        for name in ("k", "growth_rate"):
            np.testing.assert_allclose(getattr(fc, name)[ok], getattr(fn, name)[ok], rtol=TOL)
            np.testing.assert_allclose(getattr(fc, name)[ok], getattr(box[1], name)[idx][ok],
                                       rtol=TOL)
    # shapes: 2-D, broadcasting parameters, a 0-d set, an empty batch, integer inputs
    idx = rng.choice(np.flatnonzero(box[2].unstable & (box[0].eta > 0)), 12, replace=False)
    q = small(p, idx)
    grid = dp.SheetParams(q.inv_mu2.reshape(3, 4), q.p_ext.reshape(3, 4),
                          q.kappa.reshape(3, 4), q.eta.reshape(3, 4))
    assert_same(*both(grid))
    assert both(grid)[0].k.shape == (3, 4)
    bcast = dp.SheetParams(q.inv_mu2[:, None], q.p_ext[None, :5], np.float64(0.05), q.eta[:, None])
    fc, fn = both(bcast)
    assert fc.k.shape == (12, 5)
    assert_same(fc, fn, tol=1e-10)
    scalar = dp.sheet_params(inv_mu2=0.4, p_ext=0.3, kappa=0.1, eta=0.01)
    fc, fn = both(scalar)
    assert fc.k.shape == () and fc.unstable
    assert_same(fc, fn)
    empty = dp.sheet_params(inv_mu2=np.zeros(0), p_ext=0.0, kappa=0.0, eta=1.0)
    fc, fn = both(empty)
    assert fc.k.shape == (0,)
    assert_same(fc, fn)
    ints = dp.SheetParams(np.array([0]), np.array([0]), np.array([0]), np.array([1]))
    fc, fn = both(ints)
    assert_same(fc, fn)
    # field-free, non-rotating, P_ext = 0: k_m = 1/2, gamma_m t0 = 1/2, i.e.
    # lambda_m = 2 c_s^2 / (G Sigma) and gamma_m = pi G Sigma / c_s (Larson 1985, MNRAS
    # 214, 379), in the units of docs/physics.md, "Dimensionless form" (L0 = c_s^2 / (2 pi G Sigma))
    np.testing.assert_allclose([fc.k[0], fc.growth_rate[0]], [0.5, 0.5], rtol=1e-14)


def test_non_finite_parameters_give_no_mode_on_both_paths():
    nan, inf = np.nan, np.inf
    p = dp.sheet_params(inv_mu2=[nan, 0.5, 0.5, inf, 0.5], p_ext=[0, nan, 0, 0, inf],
                        kappa=[0.1, 0.1, nan, 0.1, 0.1], eta=[0, 1, 1, 0, 1])
    with np.errstate(all="ignore"):
        fc, fn = both(p)
    assert not fc.unstable.any()
    assert_same(fc, fn)


def test_kernel_choice(monkeypatch):
    p = dp.sheet_params(inv_mu2=[0.3, 2.0], p_ext=0.2, kappa=0.1, eta=[0.01, 0.0])
    ref = dp.fastest_mode(p, kernel="numpy")
    with pytest.raises(InferError, match="INFER_KERNEL"):
        dp.fastest_mode(p, kernel="fast")
    with pytest.raises(InferError, match="'fast'"):
        dp.set_kernel("fast")
    # the environment variable is read once, at the first call without kernel= (or again
    # after set_kernel(None))
    monkeypatch.setattr(dp, "_default_kernel", None)      # restored afterwards
    monkeypatch.setenv("INFER_KERNEL", "gpu")
    with pytest.raises(InferError, match="'gpu'"):
        dp.fastest_mode(p)
    dp.set_kernel(None)
    monkeypatch.setenv("INFER_KERNEL", "numpy")
    monkeypatch.setattr(dp, "_fastest_mode_compiled", None)    # would fail if called
    assert_same(dp.fastest_mode(p), ref, tol=0)
    # numba missing: "auto" falls back to numpy, "compiled" says what to do
    dp.set_kernel("auto")
    monkeypatch.setattr(dp, "_compiled_kernel", False)
    assert_same(dp.fastest_mode(p), ref, tol=0)
    with pytest.raises(InferError, match="numba"):
        dp.fastest_mode(p, kernel="compiled")


def _run(code, **env):
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         env={**os.environ, **env}, check=True, timeout=120)
    return json.loads(out.stdout)


PROBE = """
import json, sys
{pre}
from infer.physics import dispersion as dp
p = dp.sheet_params(inv_mu2=[0.3, 0.9, 2.0], p_ext=0.2, kappa=0.1, eta=[0.01, 1e-4, 0.0])
m = dp.fastest_mode(p)
print(json.dumps({{"k": [None if x != x else x for x in m.k.tolist()], "numba": "numba" in sys.modules,
                  "compiled": "infer.physics.kernel_compiled" in sys.modules}}))
"""


def test_numpy_path_without_numba_in_a_fresh_process():
    p = dp.sheet_params(inv_mu2=[0.3, 0.9, 2.0], p_ext=0.2, kappa=0.1, eta=[0.01, 1e-4, 0.0])
    ref = dp.fastest_mode(p, kernel="numpy").k
    # numba made unimportable (a None entry in sys.modules makes import raise ImportError)
    out = _run(PROBE.format(pre="sys.modules['numba'] = None"))
    np.testing.assert_array_equal(np.array(out["k"], dtype=float), ref)
    assert not out["compiled"]
    # INFER_KERNEL=numpy: numba is never imported
    out = _run(PROBE.format(pre=""), INFER_KERNEL="numpy")
    np.testing.assert_array_equal(np.array(out["k"], dtype=float), ref)
    assert not out["numba"]
    out = _run(PROBE.format(pre=""))
    assert out["compiled"]
    np.testing.assert_allclose(np.array(out["k"], dtype=float), ref, rtol=TOL)

#!/usr/bin/env python3
"""Forward-model benchmark: vectorized ``infer.predict`` against a by-hand baseline.

Run from the project root with the project's interpreter (the virtual environment where
``infer`` is installed)::

    python benchmarks/forward_model.py [--sets 100000] [--baseline-sets 640] [--seed 1]

One run draws random, realistic disk conditions (surface density 1-300 g/cm2,
temperature 10-100 K, mass-to-flux ratio 0.3-10, ambipolar and Ohmic
diffusivities 1e14-1e21 cm2/s each, Keplerian epicyclic frequency for a
0.2-2 Msun star at 20-200 au; all log-uniform) and measures

* the vectorized model: one ``infer.predict`` call on all of them
  (Quantity in, Quantity out, validation included);
* a baseline written by hand the obvious way, one set at a time: the closed-form
  unstable band, then ``scipy.optimize.minimize_scalar`` (bounded, in log k
  over the band, tight ``xatol``) maximising the largest real root that
  ``numpy.roots`` finds for the cubic at each trial wavenumber.

The baseline runs on the first ``--baseline-sets`` of the same draws (stable
ones included, which cost it only the band test), so both see the same mix.
It prints both throughputs (sets per second), their ratio and the largest
relative disagreement in wavelength and in growth rate over the sets that both
call unstable. Goals: ratio >= 300; disagreement < 1e-6 in wavelength and
< 1e-8 in growth rate.

Times are CPU times of this process (time.process_time), best of ``--repeat``
interleaved runs, so that other work on a shared machine disturbs them less.

Also printed: the agreement of the compiled and numpy kernel paths over all the sets,
the time of the first compiled call of the process, and the CPU time of one
``infer.dispersion.fastest_mode`` call on 16 and on 1000 unstable sets for both paths
(a sampler's batch, dimensionless parameters ready), beside a trivial vectorized numpy
log-probability call for scale.

Recorded figures (2-core shared VM, numpy 2.4, numba 0.68, 2026-12-04; three runs,
load average 1.75, 1.94, 2.10 at their starts):

    baseline (numpy.roots inside minimize_scalar, one set at a time): 640 sets in
        0.088-0.090 s -> 7,144-7,271 sets/s (215 unstable)
    vectorized infer.predict, compiled kernel: 100000 sets in 0.029 s
        throughput ratio: 480, 470, 484 (goal >= 300)
    vectorized infer.predict, numpy kernel: 100000 sets in 0.056-0.081 s
        throughput ratio: 250, 170, 244
    both paths: sets unstable in both 215, in only one 0; largest relative disagreement
        with the baseline: wavelength 2.41e-07, growth rate 1.32e-12
    compiled vs numpy over all 100000 sets: same unstable sets; wavelength 3.1e-15,
        growth rate 2.2e-15
    fastest_mode per call (per set): N=16 compiled 11.6-12.0 us (0.73-0.75 us),
        numpy 730-756 us (46-47 us); N=1000 compiled 497-512 us (0.50-0.51 us),
        numpy 2497-2621 us (2.5-2.6 us); trivial numpy log-probability call 3.3-3.4 us

The wavelength disagreement is the baseline's: scipy's bounded scalar search stops at
~sqrt(eps) relative in log k on a flat maximum.
"""

from __future__ import annotations

import argparse
import time

import astropy.units as u
import numpy as np
from scipy.optimize import minimize_scalar

from infer import predict
from infer.constants import AU, M_SUN, YR, G
from infer.physics import dispersion
from infer.physics.conditions import derive_conditions, kernel_inputs
from infer.physics.sheet import equilibrium


def draw(n: int, seed: int) -> dict[str, np.ndarray]:
    """Random conditions in cgs (log-uniform in each range)."""
    rng = np.random.default_rng(seed)

    def logu(lo, hi):
        return 10.0 ** rng.uniform(np.log10(lo), np.log10(hi), n)

    mstar = logu(0.2, 2.0) * M_SUN
    radius = logu(20.0, 200.0) * AU
    return {
        "sigma": logu(1.0, 300.0),
        "temperature": logu(10.0, 100.0),
        "mu0": logu(0.3, 10.0),
        "eta_ad": logu(1e14, 1e21),
        "eta_ohm": logu(1e14, 1e21),
        "mstar": mstar,
        "radius": radius,
        "kappa": np.sqrt(G * mstar / radius**3),   # Keplerian: kappa = Omega
    }


def run_vectorized(c: dict[str, np.ndarray]):
    out = predict(
        surface_density=c["sigma"] * u.g / u.cm**2, temperature=c["temperature"] * u.K,
        mass_to_flux=c["mu0"], eta_ad=c["eta_ad"] * u.cm**2 / u.s,
        eta_ohm=c["eta_ohm"] * u.cm**2 / u.s,
        stellar_mass=c["mstar"] * u.g, radius=c["radius"] * u.cm,
    )
    return out.wavelength.to_value(u.au), 1.0 / out.growth_time.to_value(u.yr)


def baseline_one(sigma, temperature, mu0, eta, kappa):
    """Fastest mode of one set, the straightforward way; (wavelength au, rate 1/yr) or NaN."""
    eq = equilibrium(sigma, temperature)
    ceff2, z0 = float(eq.ceff2), float(eq.z0)
    b2 = (2.0 * np.pi * np.sqrt(G) * sigma / mu0) ** 2
    tpg = 2.0 * np.pi * G * sigma
    disc = tpg**2 - 4.0 * ceff2 * kappa**2        # band D(k) < 0 (diffusive sheet)
    if disc <= 0.0:
        return np.nan, np.nan
    k_hi = (tpg + np.sqrt(disc)) / (2.0 * ceff2)
    k_lo = 2.0 * kappa**2 / (tpg + np.sqrt(disc))

    def minus_rate(logk):
        k = np.exp(logk)
        d = kappa**2 + ceff2 * k * k - tpg * k
        lam = b2 / (2.0 * np.pi * sigma) * (k + k * k * z0)
        theta = eta * (k / z0 + k * k)
        roots = np.roots([1.0, theta, d + lam, theta * d])
        return -max(roots.real.max(), 0.0)

    res = minimize_scalar(minus_rate, bounds=(np.log(k_lo), np.log(k_hi)), method="bounded",
                          options={"xatol": 1e-12, "maxiter": 500})
    rate = -res.fun
    if rate <= 0.0:
        return np.nan, np.nan
    return 2.0 * np.pi / np.exp(res.x) / AU, rate * YR


def run_baseline(c: dict[str, np.ndarray], n: int):
    lam = np.full(n, np.nan)
    rate = np.full(n, np.nan)
    for i in range(n):
        lam[i], rate[i] = baseline_one(c["sigma"][i], c["temperature"][i], c["mu0"][i],
                                       c["eta_ad"][i] + c["eta_ohm"][i], c["kappa"][i])
    return lam, rate


def kernel_params(c: dict[str, np.ndarray], idx) -> dispersion.SheetParams:
    """Dimensionless parameters of the sets ``idx``, as infer.physics.predict.forward makes them."""
    cond = derive_conditions(sigma=c["sigma"][idx], temperature=c["temperature"][idx], p_ext=0.0,
                             kappa=c["kappa"][idx], mu0=c["mu0"][idx], eta_ad=c["eta_ad"][idx],
                             eta_ohm=c["eta_ohm"][idx])
    return kernel_inputs(cond)


def per_call(fn, *, budget: float = 0.2, repeat: int = 5) -> float:
    """CPU seconds per call of ``fn()``: best of ``repeat`` loops of ~``budget`` s each."""
    fn()
    t = time.process_time()
    fn()
    n = max(1, int(budget / max(time.process_time() - t, 1e-7)))
    best = np.inf
    for _ in range(repeat):
        t = time.process_time()
        for _ in range(n):
            fn()
        best = min(best, (time.process_time() - t) / n)
    return best


def first_compiled_call() -> str:
    """Time the first compiled-kernel call of this process (numba import + cache load/compile)."""
    t = time.perf_counter()
    if not dispersion.compiled_available():
        return "compiled kernel: numba cannot be imported; numpy path only"
    dispersion.fastest_mode(dispersion.sheet_params(inv_mu2=0.4, kappa=0.1, eta=0.01),
                            kernel="compiled")
    t_all = time.perf_counter() - t
    from infer.physics.kernel_compiled import fastest_mode_arrays
    how = ("loaded from the on-disk cache" if fastest_mode_arrays.stats.cache_hits
           else "compiled, no cache yet")
    return f"first compiled call of this process: {t_all:.2f} s wall (numba import; {how})"


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sets", type=int, default=100_000)
    ap.add_argument("--baseline-sets", type=int, default=640)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--repeat", type=int, default=3,
                    help="time every variant N times, interleaved, and keep the best of each")
    args = ap.parse_args()

    print(first_compiled_call())
    paths = ["compiled", "numpy"] if dispersion.compiled_available() else ["numpy"]
    c = draw(args.sets, args.seed)
    nb = min(args.baseline_sets, args.sets)
    t_v = dict.fromkeys(paths, np.inf)
    res = {}
    t_b = np.inf
    for _ in range(args.repeat):         # interleaved, so all see the same machine load
        for path in paths:
            dispersion.set_kernel(path)
            t = time.process_time()
            res[path] = run_vectorized(c)
            t_v[path] = min(t_v[path], time.process_time() - t)
        t = time.process_time()
        lam_b, rate_b = run_baseline(c, nb)
        t_b = min(t_b, time.process_time() - t)
    dispersion.set_kernel(None)
    thr_b = nb / t_b
    fin_b = np.isfinite(lam_b)
    print(f"baseline (numpy.roots inside minimize_scalar, one set at a time): {nb} sets in "
          f"{t_b:.3f} s -> {thr_b:,.0f} sets/s ({fin_b.sum()} unstable)")
    for path in paths:
        lam_v, rate_v = res[path]
        thr_v = args.sets / t_v[path]
        fin_v = np.isfinite(lam_v[:nb])
        both = fin_b & fin_v
        err_lam = np.max(np.abs(lam_v[:nb][both] / lam_b[both] - 1.0)) if both.any() else np.nan
        err_rate = np.max(np.abs(rate_v[:nb][both] / rate_b[both] - 1.0)) if both.any() else np.nan
        print(f"vectorized infer.predict, {path} kernel: {args.sets} sets in {t_v[path]:.3f} s -> "
              f"{thr_v:,.0f} sets/s ({np.mean(np.isfinite(lam_v)):.1%} unstable)")
        print(f"  throughput ratio: {thr_v / thr_b:,.0f} (goal >= 300)")
        print(f"  sets unstable in both: {both.sum()}; unstable in only one: {(fin_b != fin_v).sum()}")
        print(f"  largest relative disagreement over them: wavelength {err_lam:.2e} (goal < 1e-6), "
              f"growth rate {err_rate:.2e} (goal < 1e-8)")
    print(f"  (CPU times, best of {args.repeat} interleaved runs each)")
    if len(paths) == 2:
        (lc, rc), (ln, rn) = res["compiled"], res["numpy"]
        same = np.array_equal(np.isfinite(lc), np.isfinite(ln))
        f = np.isfinite(ln)
        print(f"compiled vs numpy kernel over all {args.sets} sets: same unstable sets: {same}; "
              f"largest relative difference: wavelength {np.max(np.abs(lc[f] / ln[f] - 1)):.1e}, "
              f"growth rate {np.max(np.abs(rc[f] / rn[f] - 1)):.1e}")

    # Latency of one fastest_mode call on a sampler-sized batch (dimensionless parameters
    # ready, as the sampler's model hands them over), unstable sets only: walkers sit where
    # a mode grows.
    grow = np.flatnonzero(np.isfinite(res[paths[-1]][0]))
    x = np.random.default_rng(args.seed).normal(size=(16, 5))
    t_triv = per_call(lambda: -0.5 * np.sum(x * x, axis=1))
    print(f"fastest_mode latency (CPU time per call, unstable sets; for scale, a trivial "
          f"vectorized numpy log-probability call on 16 walkers costs {t_triv * 1e6:.1f} us):")
    for n in (16, 1000):
        p = kernel_params(c, grow[:n])
        for path in paths:
            t = per_call(lambda p=p, path=path: dispersion.fastest_mode(p, kernel=path))
            print(f"  N={n:5d} {path:>8}: {t * 1e6:9.1f} us per call, {t * 1e6 / n:7.3f} us per set")


if __name__ == "__main__":
    main()

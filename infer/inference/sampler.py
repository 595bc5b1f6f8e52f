"""The emcee driver: start at the MAP, sample in checkpointed chunks, stop on convergence.

* Reproducible: ``seed`` fixes the optimiser's starts, the initial ball and
  emcee's random state; the random state is saved with every chunk, so a
  resumed run continues exactly as an uninterrupted one would.
* Crash-safe: chunks are appended to ``chain.h5`` atomically, at a cost that
  does not grow with the chain (:mod:`infer.inference.chainfile`); a killed
  run loses at most one chunk.
* Coordinates: the walkers move in the ln-parameters, or (``coordinates =
  "whitened"``) in affine coordinates whitened at the MAP
  (:mod:`infer.inference.coordinates`); the file always stores ln-parameters.
* Stops once the chain is longer than ``tau_factor`` integrated
  autocorrelation times and the estimate changed by less than ``tau_rtol``
  since the previous check (emcee's documented recipe), or at ``max_steps``
  with ``converged = False``.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy import optimize

from ..errors import ChainError, InferError
from .chainfile import ChainData, ChainWriter, create_chain, read_chain
from .config import SamplerOptions
from .coordinates import AffineMap, InSamplerCoordinates, whitening_map

__all__ = ["SampleResult", "autocorr_times", "coordinate_map", "find_map", "find_modes",
           "initial_ball", "make_moves", "run_sampler"]


@dataclass(frozen=True)
class SampleResult:
    """Outcome of :func:`run_sampler`.

    Attributes
    ----------
    chain : ChainData
    tau : ndarray (ndim,)
        Final integrated autocorrelation time per parameter, steps.
    converged : bool
    wall_time : float
        Seconds spent sampling in this call.
    resumed_from : int
        Steps that were already in the file.
    """

    chain: ChainData
    tau: np.ndarray
    converged: bool
    wall_time: float
    resumed_from: int


def autocorr_times(chain: np.ndarray, *, c: float = 5.0) -> np.ndarray:
    """Integrated autocorrelation time per parameter (Sokal window, c = 5).

    The estimator of ``emcee.autocorr.integrated_time(chain, c=5, tol=0)``
    (normalised autocorrelation function of each walker, averaged over the
    walkers; window: the first lag M with M >= c tau(M)), computed in one batch:
    real FFTs of all the series at once, zero-padded to a fast length of at
    least 2 n - 1 (no wrap-around, as emcee's padding to twice a power of two),
    and one inverse FFT per parameter of the walker-averaged, normalised power
    spectrum (the transform is linear). Agrees with emcee to rounding (about
    1e-14 relative) at a fraction of the cost, which matters because the
    stopping rule re-estimates tau on the whole chain at every check.

    Parameters
    ----------
    chain : ndarray (n_steps, n_walkers, n_dim)
    c : float
        Window constant.

    Returns
    -------
    ndarray (n_dim,)
        Steps; inf for chains shorter than 4 steps.
    """
    from scipy import fft

    chain = np.asarray(chain, dtype=float)
    n_t, n_w, n_d = chain.shape
    if n_t < 4:
        return np.full(n_d, np.inf)
    m = fft.next_fast_len(2 * n_t - 1, real=True)
    y = np.transpose(chain, (2, 1, 0))
    y = y - np.mean(y, axis=-1, keepdims=True)
    spec = fft.rfft(y, n=m, axis=-1)
    power = spec.real ** 2 + spec.imag ** 2
    with np.errstate(invalid="ignore", divide="ignore"):
        # lag-0 autocovariance (Parseval) normalises each walker's function
        power /= np.sum(y * y, axis=-1, keepdims=True)
    acf = fft.irfft(power.sum(axis=1), n=m, axis=-1)[:, :n_t] / n_w
    taus = 2.0 * np.cumsum(acf, axis=1) - 1.0
    out = np.empty(n_d)
    for d in range(n_d):
        inside = np.arange(n_t) < c * taus[d]
        out[d] = taus[d, np.argmin(inside) if inside.any() else n_t - 1]
    return out


def find_modes(log_prob: Callable, x0s: np.ndarray, *, n_starts: int = 4,
               keep_within: float = 5.0) -> list[tuple[float, np.ndarray]]:
    """Local maxima of the posterior from several starts, best first.

    Nelder-Mead runs from the ``n_starts`` best of the starting points; the
    best result is polished with Powell. Distinct optima (in ln-parameter space)
    whose log-posterior is within ``keep_within`` of the best are returned, so
    that walkers can be started in every competitive mode (the fastest
    wavelength is not monotonic in the mass-to-flux ratio, which makes
    separated modes common).

    Parameters
    ----------
    log_prob : callable
        Vectorized log-posterior, (n, ndim) -> (n,).
    x0s : ndarray (n_points, ndim)
        Candidate starting points (e.g. prior draws); -inf ones are skipped.

    Returns
    -------
    list of (log_prob, x)
    """
    def nlp(x):
        v = float(log_prob(x[None, :])[0])
        return 1e300 if not np.isfinite(v) else -v

    lp0 = log_prob(x0s)
    finite = np.flatnonzero(np.isfinite(lp0))
    if finite.size == 0:
        raise InferError("no starting point with a finite posterior: the priors exclude every "
                         "growing mode, or the data are impossible under the model; widen the priors")
    ndim = x0s.shape[1]
    spread = np.std(x0s[finite], axis=0) if finite.size > 1 else np.ones(ndim)
    spread = np.where(spread > 0, spread, 1.0)
    found: list[tuple[float, np.ndarray]] = []
    for i in finite[np.argsort(-lp0[finite])][:n_starts]:
        r = optimize.minimize(nlp, x0s[i], method="Nelder-Mead",
                              options={"maxiter": 200 * ndim, "xatol": 1e-4, "fatol": 1e-6})
        found.append((-float(r.fun), np.asarray(r.x, dtype=float)))
    found.sort(key=lambda c: -c[0])
    best_lp, best_x = found[0]
    r = optimize.minimize(nlp, best_x, method="Powell", options={"xtol": 1e-4, "ftol": 1e-8})
    if -r.fun >= best_lp:
        found[0] = (-float(r.fun), np.asarray(r.x, dtype=float))
    modes: list[tuple[float, np.ndarray]] = []
    for lp, x in sorted(found, key=lambda c: -c[0]):
        if not np.isfinite(lp) or lp < found[0][0] - keep_within:
            continue
        if all(np.max(np.abs(x - y) / spread) > 0.1 for _, y in modes):
            modes.append((lp, x))
    return modes


def find_map(log_prob: Callable, x0s: np.ndarray) -> np.ndarray:
    """Maximum a posteriori point (the best of :func:`find_modes`)."""
    return find_modes(log_prob, x0s)[0][1]


def initial_ball(log_prob: Callable, centre: np.ndarray, scale: np.ndarray, n_walkers: int,
                 rng: np.random.Generator, *, max_tries: int = 100) -> np.ndarray:
    """Walkers in a small Gaussian ball around ``centre``, each with finite log-probability."""
    ndim = centre.size
    p = centre + scale * rng.standard_normal((n_walkers, ndim))
    lp = log_prob(p)
    for _ in range(max_tries):
        bad = ~np.isfinite(lp)
        if not bad.any():
            return p
        p[bad] = centre + scale * rng.standard_normal((int(bad.sum()), ndim))
        lp[bad] = log_prob(p[bad])
        scale = scale * 0.7
    raise InferError("could not place the walkers around the MAP point with finite posterior; "
                     "the posterior may sit on a prior edge; widen the priors")


def make_moves(kind: str):
    """emcee moves: ``"de"`` (DEMove 0.8 + DESnookerMove 0.2) or ``"stretch"``."""
    import emcee

    if kind == "stretch":
        return emcee.moves.StretchMove()
    if kind == "de":
        return [(emcee.moves.DEMove(), 0.8), (emcee.moves.DESnookerMove(), 0.2)]
    raise InferError(f"sampler.moves: unknown {kind!r}; use 'de' or 'stretch'")


def _start(log_prob, prior_draws, ndim, n_walkers, seed):
    """MAP point and initial walkers: small balls around each competitive mode."""
    rng = np.random.default_rng([seed, 1])
    modes = find_modes(log_prob, prior_draws(rng, 64))
    # ball scale: a small fraction of the spread of the prior, in ln-space
    spread = _prior_spread(prior_draws, rng)
    modes = modes[: max(1, n_walkers // (2 * ndim + 2))]
    counts = np.full(len(modes), n_walkers // len(modes))
    counts[: n_walkers - counts.sum()] += 1
    p0 = np.concatenate([initial_ball(log_prob, x, 1e-3 * spread, int(c), rng)
                         for (_, x), c in zip(modes, counts, strict=True)])
    return modes[0][1], p0, [(float(lp), [float(v) for v in x]) for lp, x in modes]


def _prior_spread(prior_draws, rng):
    spread = np.std(prior_draws(rng, 256), axis=0)
    return np.where(np.isfinite(spread) & (spread > 0), spread, 1.0)


def coordinate_map(log_prob: Callable, prior_draws: Callable, x_map: np.ndarray, *,
                   options: SamplerOptions) -> AffineMap:
    """The sampler's coordinates for ``options.coordinates``.

    "whitened": :func:`infer.inference.coordinates.whitening_map` at ``x_map``
    with the prior's spread as regulariser; the identity for "original", and
    where the curvature at the MAP cannot be formed (non-finite neighbours).
    """
    ndim = x_map.size
    if options.coordinates == "whitened":
        spread = _prior_spread(prior_draws, np.random.default_rng([options.seed, 2]))
        amap = whitening_map(log_prob, x_map, width=spread)
        if amap is not None:
            return amap
    return AffineMap.identity(ndim)


def run_sampler(
    log_prob: Callable,
    *,
    names: tuple[str, ...],
    prior_draws: Callable[[np.random.Generator, int], np.ndarray],
    options: SamplerOptions,
    chain_path: str | Path,
    run_hash: str,
    resume: bool = False,
    progress: bool = True,
    info: dict | None = None,
) -> SampleResult:
    """Sample ``log_prob`` with emcee, checkpointing into ``chain_path``.

    Parameters
    ----------
    log_prob : callable
        Vectorized log-posterior (n, ndim) -> (n,), picklable.
    names : tuple of str
        Parameter names (ndim of them).
    prior_draws : callable
        ``prior_draws(rng, n) -> (n, ndim)`` draws from the prior (for the MAP starts).
    options : SamplerOptions
        ``options.coordinates = "whitened"`` moves the walkers in coordinates
        whitened at the MAP (:mod:`infer.inference.coordinates`); the map is
        stored in the file's info and reused on resume.
    chain_path : path
    run_hash : str
        Stored in the file; a resume refuses a file with another hash.
    resume : bool
        Continue the chain in ``chain_path`` towards ``options.max_steps``.
    progress : bool
        Show a tqdm progress bar with the current autocorrelation estimate.
    info : dict
        Extra metadata stored in the file.
    """
    import emcee

    chain_path = Path(chain_path)
    ndim = len(names)
    n_walkers = options.walkers
    t_start = time.perf_counter()
    if resume and chain_path.exists():
        data = read_chain(chain_path)
        if data.run_hash != run_hash:
            raise ChainError(f"{chain_path}: the saved chain belongs to a different catalog or "
                             f"config; use another --out folder, or fit again without --resume")
        if data.chain.shape[1] != n_walkers or data.names != tuple(names):
            raise ChainError(f"{chain_path}: the saved chain has {data.chain.shape[1]} walkers and "
                             f"parameters {list(data.names)}; they cannot change on --resume")
        if data.iteration == 0 or data.random_state is None:
            resume = False
    else:
        resume = False
    if not resume:
        x_map, p0, modes = _start(log_prob, prior_draws, ndim, n_walkers, options.seed)
        amap = coordinate_map(log_prob, prior_draws, x_map, options=options)
        meta = dict(info or {})
        meta.update(seed=options.seed, moves=options.moves, map=[float(v) for v in x_map],
                    modes=modes, initial=p0.tolist(), coordinates=amap.to_info())
        create_chain(chain_path, names=names, n_walkers=n_walkers, run_hash=run_hash, info=meta)
        data = read_chain(chain_path)
        y0 = amap.to_sampler(p0)
        target = log_prob if amap.is_identity else InSamplerCoordinates(log_prob, amap)
        state = emcee.State(y0, log_prob=target(y0),
                            random_state=np.random.RandomState(options.seed).get_state())
        tau_history: list = []
    else:
        amap = (AffineMap.from_info(data.info["coordinates"]) if "coordinates" in data.info
                else AffineMap.identity(ndim))
        target = log_prob if amap.is_identity else InSamplerCoordinates(log_prob, amap)
        y_last = data.sampler_coords if data.sampler_coords is not None else data.chain[-1]
        state = emcee.State(y_last, log_prob=data.log_prob[-1], random_state=data.random_state)
        tau_history = list(data.tau_history)
    resumed_from = data.iteration
    accepted = np.array(data.accepted, dtype=float)
    store = _Store(data.chain, data.log_prob)
    writer = ChainWriter(chain_path)

    iteration = data.iteration
    converged, tau = _converged(tau_history, iteration, options)
    bar = None
    if progress and iteration < options.max_steps and not converged:
        import sys

        from tqdm.auto import tqdm

        interactive = sys.stderr.isatty()
        bar = tqdm(total=options.max_steps, initial=iteration, unit="step", desc="sampling",
                   dynamic_ncols=True, leave=True, mininterval=0.2 if interactive else 10.0)
    saved = iteration
    try:
        while iteration < options.max_steps and not converged:
            # one block of check_every steps, then a convergence check
            n = min(options.max_steps - iteration, options.check_every)
            sampler = emcee.EnsembleSampler(n_walkers, ndim, target, vectorize=True,
                                            moves=make_moves(options.moves))
            sampler.random_state = state.random_state
            for st in sampler.sample(state, iterations=n, store=True,
                                     skip_initial_state_check=True):
                state = st
                if bar is not None:
                    bar.update(1)
            store.add(amap.to_model(sampler.get_chain()), sampler.get_log_prob())
            accepted = accepted + sampler.backend.accepted
            iteration += n
            tau = autocorr_times(store.chain)
            tau_history.append([iteration, [float(t) for t in tau]])
            converged, tau = _converged(tau_history, iteration, options)
            # checkpoint: every ~10% of the chain (at least every block), and at the end
            if converged or iteration >= options.max_steps or iteration - saved >= max(
                    options.check_every, saved // 10):
                writer.append(coords=store.chain[saved:], log_prob=store.log_prob[saved:],
                              accepted=accepted, random_state=state.random_state,
                              tau_history=tau_history,
                              sampler_coords=None if amap.is_identity else state.coords)
                saved = iteration
            if bar is not None:
                bar.set_postfix_str(f"tau~{np.max(tau):.0f} steps, need {options.tau_factor:.0f}x")
    finally:
        writer.close()
        if bar is not None:
            bar.close()
    data = read_chain(chain_path)
    if not tau_history:
        tau = autocorr_times(data.chain)
    return SampleResult(chain=data, tau=np.asarray(tau, dtype=float), converged=bool(converged),
                        wall_time=time.perf_counter() - t_start, resumed_from=resumed_from)


class _Store:
    """The chain in memory, grown by doubling (no copy of the whole chain per block)."""

    def __init__(self, chain: np.ndarray, log_prob: np.ndarray):
        self._c = np.array(chain, dtype=float)
        self._l = np.array(log_prob, dtype=float)
        self.n = chain.shape[0]

    def add(self, coords: np.ndarray, log_prob: np.ndarray) -> None:
        k = coords.shape[0]
        if self.n + k > self._c.shape[0]:
            size = max(2 * self._c.shape[0], self.n + k)
            self._c = np.concatenate([self._c[:self.n], np.empty((size - self.n, *coords.shape[1:]))])
            self._l = np.concatenate([self._l[:self.n], np.empty((size - self.n, *log_prob.shape[1:]))])
        self._c[self.n:self.n + k] = coords
        self._l[self.n:self.n + k] = log_prob
        self.n += k

    @property
    def chain(self) -> np.ndarray:
        return self._c[:self.n]

    @property
    def log_prob(self) -> np.ndarray:
        return self._l[:self.n]


def _converged(tau_history: list, iteration: int, options: SamplerOptions):
    if not tau_history:
        return False, np.array([np.inf])
    tau = np.asarray(tau_history[-1][1], dtype=float)
    if len(tau_history) < 2 or not np.all(np.isfinite(tau)):
        return False, tau
    prev = np.asarray(tau_history[-2][1], dtype=float)
    long_enough = np.all(tau * options.tau_factor < iteration)
    stable = np.all(np.abs(prev - tau) / tau < options.tau_rtol)
    return bool(long_enough and stable), tau

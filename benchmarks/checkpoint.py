"""Chain checkpoint cost: does one checkpoint cost O(chunk) or O(whole file)?

A chain file with the demo's shape (32 walkers, 6 parameters) is filled to N stored steps,
then one more checkpoint of a fixed chunk (100 steps) is timed, for N = 1 000 and 10 000:

* ``ChainWriter.append`` (what a run uses, a hard-linked shadow one checkpoint behind): should
  not grow with N;
* ``ChainWriter(links=False).append`` (the by-hand baseline: copy the whole file, append,
  fsync, replace): grows with N.

Each figure is the median of 5 checkpoints; the load average is printed with each.
Usage: python benchmarks/checkpoint.py [--walkers 32] [--ndim 6] [--chunk 100]
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time
from pathlib import Path

import numpy as np

from infer.inference.chainfile import ChainWriter, create_chain


def checkpoint_time(folder: Path, *, n_stored: int, chunk: int, walkers: int, ndim: int,
                    links: bool, repeats: int = 5) -> float:
    """Median seconds of one checkpoint of ``chunk`` steps onto a file holding ``n_stored``."""
    rng = np.random.default_rng(1)
    path = folder / f"chain_{n_stored}_{links}.h5"
    names = [f"p{j}" for j in range(ndim)]
    create_chain(path, names=names, n_walkers=walkers, run_hash="bench", info={})
    state = np.random.RandomState(0).get_state()
    writer = ChainWriter(path, links=links)

    def one(n):
        writer.append(coords=rng.normal(size=(n, walkers, ndim)), log_prob=rng.normal(size=(n, walkers)),
                      accepted=np.zeros(walkers), random_state=state, tau_history=[])

    for _ in range(n_stored // 1000):   # fill in blocks of 1000 steps (not timed)
        one(1000)
    one(chunk)   # the writer's first checkpoint in a process copies once: not what is measured
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        one(chunk)
        times.append(time.perf_counter() - t0)
    writer.close()
    return float(np.median(times))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--walkers", type=int, default=32)
    ap.add_argument("--ndim", type=int, default=6)
    ap.add_argument("--chunk", type=int, default=100)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        res = {}
        for links, label in ((True, "ChainWriter (shadow)"), (False, "copy whole file")):
            for n in (1000, 10000):
                t = checkpoint_time(Path(tmp), n_stored=n, chunk=args.chunk, walkers=args.walkers,
                                    ndim=args.ndim, links=links)
                res[label, n] = t
                print(f"{label:<22} {n:6d} steps stored: {1e3 * t:7.2f} ms per checkpoint of "
                      f"{args.chunk} steps   load {os.getloadavg()[0]:.2f}")
            print(f"{label:<22} 10000 / 1000 steps: {res[label, 10000] / res[label, 1000]:.2f}x")


if __name__ == "__main__":
    main()

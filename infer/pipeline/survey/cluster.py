"""The Dask cluster of a survey: a client to a scheduler or to a local cluster of processes,
and the tasks run on it with a progress bar."""

from __future__ import annotations

import os
import sys
from collections.abc import Callable, Iterator, Mapping
from contextlib import contextmanager
from typing import Any

from ...errors import InferError
from .regions import one_line
from .tasks import FitTask, failed_row, fit_task

__all__ = ["cluster_client", "run_tasks", "core_count", "LOCAL_WORKER_CONFIG"]

_THREAD_ENV = {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}

#: Dask settings for the local cluster's workers. The worker's statistical profiler samples every
#: thread's stack every 10 ms; a fit is a long run of short Python calls, and that sampling
#: slowed each fit on a worker by 10-40% (measured with benchmarks/survey.py). A survey's
#: per-task timings are in the task stream, so the profiler adds nothing the user needs.
LOCAL_WORKER_CONFIG = {"distributed.worker.profile.enabled": False}


def core_count() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - not on Linux
        return os.cpu_count() or 1


def _infer_version() -> str:
    from ... import __version__

    return __version__


def _check_workers(client, say: Callable[[str], None]) -> None:
    """Refuse workers that cannot import this package; say so when their version differs."""
    from ... import __version__

    try:
        versions = client.run(_infer_version)
    except Exception as exc:  # noqa: BLE001 - whatever the worker sent back
        raise InferError(f"the workers of the Dask cluster cannot run infer ({one_line(exc)}); "
                         f"start them from the environment infer is installed in") from None
    other = sorted({v for v in versions.values() if v != __version__})
    if other:
        say(f"warning: some workers run infer {', '.join(other)}, this client {__version__}")
    if not versions:
        say("the cluster has no workers yet; the regions wait until workers join")


@contextmanager
def cluster_client(scheduler: str | None, n_workers: int, say: Callable[[str], None]) -> Iterator[Any]:
    """A dask.distributed Client: to ``scheduler``, or to a new local cluster of processes."""
    import logging

    from dask.distributed import Client, LocalCluster

    if scheduler is not None:
        try:
            client = Client(scheduler, timeout="20s", set_as_default=False)
        except (OSError, TimeoutError, ValueError, TypeError) as exc:
            raise InferError(f"--scheduler {scheduler}: cannot connect ({one_line(exc)}); give "
                             f"the address the scheduler prints, e.g. tcp://host:8786") from None
        try:
            _check_workers(client, say)
            yield client, None
        finally:
            client.close()
        return
    import dask

    with dask.config.set(LOCAL_WORKER_CONFIG):  # the workers take the config they start with
        cluster = LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True,
                               env=dict(_THREAD_ENV), silence_logs=logging.ERROR)
    client = Client(cluster, set_as_default=False)
    link = cluster.dashboard_link
    import importlib.util

    extra = "" if importlib.util.find_spec("bokeh") else " (install bokeh to see its pages)"
    say(f"local Dask cluster: {n_workers} worker process{'es' if n_workers != 1 else ''}; "
        f"dashboard {link}{extra}")
    try:
        yield client, link
    finally:
        client.close()
        cluster.close()


def run_tasks(client, tasks: Mapping[int, FitTask], rows: list, *, retries: int,
               progress: bool) -> list:
    from dask.distributed import as_completed
    from tqdm.auto import tqdm

    futures = {}
    for i, task in tasks.items():
        futures[client.submit(fit_task, task, pure=False, retries=retries)] = i
    done = sum(r is not None for r in rows)
    bar = tqdm(total=len(rows), initial=done, unit="region", desc="survey", disable=not progress,
               dynamic_ncols=True, mininterval=0.5 if sys.stderr.isatty() else 30.0)
    try:
        for fut in as_completed(futures, loop=client.loop):
            i = futures[fut]
            task = tasks[i]
            try:
                rows[i] = fut.result()
            except Exception as exc:  # noqa: BLE001 - a bug or a lost cluster: record, go on
                rows[i] = failed_row(task.region.name, task.region.source,
                                      f"internal error ({type(exc).__name__}: {one_line(exc)})",
                                      n_clumps=len(task.region))
            fut.release()
            bar.update(1)
            if rows[i]["error"] and progress:
                bar.write(f"{rows[i]['region']}: failed: {rows[i]['error']}", file=sys.stderr)
    finally:
        bar.close()
    return rows

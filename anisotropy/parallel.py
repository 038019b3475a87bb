"""One dispatcher for independent tasks: this process, local processes, or a Dask cluster.

:func:`run_tasks` is used by the bootstrap (chunks of replicates) and by the
batch (one domain per task). The same call runs the tasks

* one after another in this process (``n_jobs`` 1, or a single task);
* on local worker processes with joblib's ``loky`` backend (``n_jobs`` > 1,
  or -1 for every core);
* on a Dask cluster (``scheduler``: an address such as
  ``tcp://scheduler-host:8786`` or a ``distributed.Client``).

Results come back in task order whatever the route, and BLAS runs on one
thread in every task, so a seeded run gives the same answer, to the last bit,
on every route. Large inputs that every task shares (the block sums of a
bootstrap, the sample table of a batch) are passed once in ``shared``: a
cluster receives them once per worker, not once per task.

:func:`warm_up` compiles every Numba kernel a discovery uses (the pair
engine's and the likelihood's) once, in the parent, before workers start.
"""

from __future__ import annotations

import os
import time
import uuid
from contextlib import contextmanager
from typing import Callable, Mapping, Sequence

import numpy as np
from joblib import Parallel, delayed
from threadpoolctl import threadpool_limits

from anisotropy import pairs
from anisotropy.errors import InputError
from anisotropy.fitting.likelihood import vecchia_negloglik, vecchia_neighbours

__all__ = ["run_tasks", "dask_client", "check_jobs", "n_workers", "warm_up",
           "SCHEDULER_TIMEOUT"]

#: Seconds to wait for a Dask scheduler before giving up with an InputError.
SCHEDULER_TIMEOUT = 20


def check_jobs(n_jobs) -> int:
    """``n_jobs`` as an int: a positive number of processes, or -1 for every core.

    Raises
    ------
    InputError
        Zero, None or not a whole number.
    """
    try:
        n = int(n_jobs)
    except (TypeError, ValueError):
        n = 0
    if n == 0 or isinstance(n_jobs, bool) or n != n_jobs:
        raise InputError(f"the number of processes must be a positive whole number, or -1 for "
                         f"every core (got {n_jobs!r}); check --jobs")
    return n


def n_workers(n_jobs, scheduler=None) -> int:
    """Processes ``n_jobs`` stands for (-1: every core); 1 when nothing runs in parallel."""
    n = check_jobs(n_jobs)
    if n == 1 and scheduler is None:
        return 1
    return max(1, os.cpu_count() or 1) if n == -1 else abs(n)


@contextmanager
def dask_client(scheduler, *, timeout=SCHEDULER_TIMEOUT):
    """A ``distributed.Client``: the one given, or one connected to an address and closed after.

    Parameters
    ----------
    scheduler : str or distributed.Client
        Scheduler address (``tcp://host:8786``) or a client, which is used
        as it is and left open.
    timeout : float
        Seconds to wait for the scheduler.

    Raises
    ------
    InputError
        dask.distributed is not installed, or the scheduler cannot be reached.
    """
    if hasattr(scheduler, "submit"):  # a Client (or a stand-in with its interface)
        yield scheduler
        return
    try:
        # optional dependency (the "distributed" extra): imported only when a cluster is named
        from distributed import Client
    except ImportError:
        raise InputError("a Dask scheduler was given but dask.distributed is not installed; "
                         "pip install 'anisotropy[distributed]', or run without a "
                         "scheduler (--scheduler).") from None
    try:
        client = Client(scheduler, timeout=timeout, set_as_default=False)
    except (OSError, TimeoutError, ValueError) as exc:
        raise InputError(f"Cannot reach the Dask scheduler at '{scheduler}' ({exc}). Check the "
                         "address (e.g. tcp://scheduler-host:8786) and that the scheduler is "
                         "running, or run without --scheduler.") from None
    try:
        yield client
    finally:
        client.close()


def _one_blas_thread(fn, *args, **kwargs):
    """``fn(*args, **kwargs)`` with BLAS on one thread, wherever it runs.

    A multi-threaded BLAS adds in an order set by its thread count, which a
    worker process or a cluster node chooses for itself: with one thread
    everywhere a task gives the same bits on every route.
    """
    with threadpool_limits(limits=1):
        return fn(*args, **kwargs)


def _indexed(fn, k, task, shared):
    return k, _one_blas_thread(fn, *task, **shared)


def run_tasks(fn: Callable, tasks: Sequence[Sequence], *, shared: Mapping | None = None,
              n_jobs=1, scheduler=None, on_result: Callable | None = None,
              label: str = "task") -> list:
    """``[fn(*task, **shared) for task in tasks]``, in this process, local processes or Dask.

    Parameters
    ----------
    fn : callable
        A module-level function (picklable).
    tasks : sequence of tuples
        Positional arguments of each call.
    shared : mapping, optional
        Keyword arguments every call receives; sent once to a cluster.
    n_jobs : int
        1: one after another in this process; > 1 (or -1, every core):
        local processes (joblib, loky backend). Ignored with a scheduler.
    scheduler : str or distributed.Client, optional
        Run on this Dask cluster instead.
    on_result : callable, optional
        ``on_result(k, result)`` as each result arrives (in arrival order
        for local processes, task order otherwise), e.g. to count progress.
    label : str
        Names the tasks on the cluster's dashboard.

    Returns
    -------
    list
        The results in task order.
    """
    shared = dict(shared or {})
    tasks = [tuple(t) for t in tasks]
    results = [None] * len(tasks)

    def take(k, res):
        results[k] = res
        if on_result is not None:
            on_result(k, res)

    if scheduler is not None:
        with dask_client(scheduler) as client:
            sent = {name: client.scatter(v, broadcast=True) for name, v in shared.items()}
            token = uuid.uuid4().hex[:8]
            futures = [client.submit(_one_blas_thread, fn, *t, **sent, pure=False,
                                     key=f"anisotropy-{label}-{token}-{k}")
                       for k, t in enumerate(tasks)]
            # in task order: as_completed would need the client to be the default one
            for k, fut in enumerate(futures):
                take(k, fut.result())
        return results
    n = check_jobs(n_jobs)
    if n == 1 or len(tasks) <= 1:
        for k, t in enumerate(tasks):
            take(k, _one_blas_thread(fn, *t, **shared))
        return results
    par = Parallel(n_jobs=n, backend="loky", return_as="generator_unordered")
    for k, res in par(delayed(_indexed)(fn, k, t, shared) for k, t in enumerate(tasks)):
        take(k, res)
    return results


def warm_up() -> float:
    """Compile (or load from Numba's cache) every kernel a discovery uses; returns seconds.

    The pair kernels (:func:`anisotropy.pairs.warm_up`) and the likelihood
    kernels of :mod:`anisotropy.fitting.likelihood` (one evaluation of
    :func:`~anisotropy.fitting.likelihood.vecchia_negloglik` on a few random
    samples: the kernels are compiled for argument types, not sizes). Call
    it once before starting worker processes, so they load the cached
    kernels instead of all compiling them at once.
    """
    t0 = time.perf_counter()
    pairs.warm_up()
    rng = np.random.default_rng(0)
    coords = rng.random((12, 3)) * 10.0
    order, nbr = vecchia_neighbours(coords, 4, seed=0)
    y = rng.standard_normal(len(coords))
    p = np.zeros(3 + 3 + 1)  # rotation vector, log ranges of one structure, nugget logit
    vecchia_negloglik(p, coords[order] - coords.mean(axis=0), y[order] - y.mean(), nbr,
                      ("spherical",))
    return time.perf_counter() - t0

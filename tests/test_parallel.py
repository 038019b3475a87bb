"""Tests of anisotropy.parallel: one dispatcher for this process, local processes and Dask.

The reference for every route is the plain Python loop ``[fn(*t, **shared) for t
in tasks]``; the warm-up is checked with Numba's own record of the signatures a
kernel was compiled for (``Dispatcher.signatures``); the BLAS thread count inside
a task with threadpoolctl's ``threadpool_info``.
"""

import importlib

import numpy as np
import pytest
from threadpoolctl import threadpool_info, threadpool_limits

from anisotropy import parallel
from anisotropy.errors import InputError


def _power(base, exponent, *, offset):
    return float(base) ** exponent + offset


TASKS = [(2, 3), (3, 2), (5, 1), (7, 0), (1.5, 2)]


def _loop():
    return [_power(*t, offset=0.5) for t in TASKS]


@pytest.mark.parametrize("n_jobs", [1, 2, -1])
def test_results_in_task_order_on_every_local_route(n_jobs):
    seen = []
    got = parallel.run_tasks(_power, TASKS, shared={"offset": 0.5}, n_jobs=n_jobs,
                             on_result=lambda k, r: seen.append((k, r)))
    assert got == _loop()
    # every result announced once, with its own task index (any arrival order)
    assert sorted(seen) == sorted(enumerate(_loop()))


def _blas_threads(_):
    importlib.import_module("scipy.linalg")   # loads SciPy's BLAS in a fresh worker too
    return sorted({int(i["num_threads"]) for i in threadpool_info()
                   if i["user_api"] == "blas"})


@pytest.mark.parametrize("n_jobs", [1, 2])
def test_every_task_runs_with_blas_on_one_thread(n_jobs):
    # threadpoolctl's own record of the BLAS libraries loaded; outside the tasks
    # BLAS may use two threads (asked for here), inside every task only one
    with threadpool_limits(limits=2):
        got = parallel.run_tasks(_blas_threads, [(k,) for k in range(3)], n_jobs=n_jobs)
    assert got == [[1]] * 3


def test_no_tasks_and_one_task():
    assert parallel.run_tasks(_power, [], shared={"offset": 0.0}, n_jobs=2) == []
    assert parallel.run_tasks(_power, [(4, 2)], shared={"offset": 1.0}, n_jobs=2) == [17.0]


@pytest.mark.parametrize("bad", [0, None, 1.5, True, "two"])
def test_jobs_validated(bad):
    with pytest.raises(InputError, match="-1 for every core"):
        parallel.check_jobs(bad)
    with pytest.raises(InputError):
        parallel.run_tasks(_power, TASKS, shared={"offset": 0.0}, n_jobs=bad)


def test_worker_count():
    assert parallel.n_workers(1) == 1
    assert parallel.n_workers(3) == 3
    assert parallel.n_workers(1, scheduler="tcp://somewhere:8786") == 1
    assert parallel.n_workers(-1) >= 1


def test_dask_route_gives_the_loop_results():
    distributed = pytest.importorskip("distributed")
    with distributed.Client(processes=False, n_workers=1, threads_per_worker=2,
                            dashboard_address=None) as client:
        seen = []
        got = parallel.run_tasks(_power, TASKS, shared={"offset": 0.5}, scheduler=client,
                                 on_result=lambda k, r: seen.append(k))
        assert got == _loop()
        assert seen == list(range(len(TASKS)))
        assert client.status == "running"  # a client that was handed in stays open


def test_unreachable_scheduler_is_an_input_error():
    pytest.importorskip("distributed")
    import socket

    with socket.socket() as s:  # a port nothing listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    with pytest.raises(InputError, match="Cannot reach the Dask scheduler"):
        with parallel.dask_client(f"tcp://127.0.0.1:{port}", timeout=2):
            pass


def test_warm_up_compiles_the_likelihood_kernels():
    # After warm_up, a likelihood refinement must not need a kernel signature that
    # warm_up did not compile (the workers of a batch would otherwise compile it at once).
    from anisotropy.fitting import likelihood

    seconds = parallel.warm_up()
    assert seconds >= 0.0
    before = set(likelihood._vecchia_terms.signatures)
    assert before
    rng = np.random.default_rng(3)
    c = rng.random((80, 3)) * [60.0, 40.0, 20.0]
    v = np.sin(c[:, 0] / 15.0) + 0.2 * rng.standard_normal(len(c))
    likelihood.refine_frame_likelihood(c, v, np.eye(3), [[30.0, 20.0, 10.0]], 0.2, [0.8],
                                       ("spherical",), maxiter=3)
    assert set(likelihood._vecchia_terms.signatures) == before

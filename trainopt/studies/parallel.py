"""Running independent study tasks on local processes or on a Dask cluster.

Studies split their work into tasks that share nothing (one condition bin of a history
audit, one point of an envelope sweep). :func:`run_tasks` runs them:

- in this process, one after another, for ``workers=1``;
- on a local pool of ``workers`` processes (default: every core), started with the
  ``spawn`` method so that no solver or CoolProp state is shared with the parent. A spawned
  process imports trainopt, CoolProp, Pyomo and SciPy again (about 4 s of CPU each,
  :data:`WORKER_START_SECONDS`), so tasks run here first, one after another, while the
  work left is too small to repay that start: a pool is started only once the last task's
  time (from the second task on) times the tasks left, shared over the workers, saves
  more than a worker's start;
- on an existing Dask cluster when a scheduler address (``tcp://host:8786``) or a
  ``distributed.Client`` is given. Dask workers need trainopt installed; a task holds its
  own case, so nothing has to be copied to them beforehand.

Tasks are handed out largest first (by ``weights``) so the cores finish together, and a
tqdm progress bar counts the weight done (rows, points) on stderr.
"""

from __future__ import annotations

import multiprocessing
import os
import time
from collections.abc import Callable, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed

from tqdm.auto import tqdm

from trainopt.errors import InputError

WORKER_START_SECONDS = 4.0
"""CPU time [s] a spawned worker spends importing trainopt and its libraries before its
first task (measured on the development machine, 2 cores, light load: 3.5-4.5 s)."""


def default_workers() -> int:
    """Number of cores this process may use [-]."""
    try:
        return max(len(os.sched_getaffinity(0)), 1)
    except AttributeError:  # not on Linux
        return max(os.cpu_count() or 1, 1)


def run_tasks(func: Callable, tasks: Sequence, *, workers: int | None = None,
              scheduler=None, weights: Sequence[float] | None = None,
              progress: bool = True, description: str = "tasks", unit: str = "task",
              start_cost: float | None = None) -> list:
    """Run ``func(task)`` for every task; return the results in the order of the tasks.

    Parameters
    ----------
    func : callable
        A module-level function (it is pickled by name for other processes).
    tasks : sequence
        Picklable arguments, one per call.
    workers : int, optional
        Local processes; 1 runs in this process; default every core. Ignored with a
        scheduler.
    scheduler : str or distributed.Client, optional
        Dask scheduler address, or a connected client.
    weights : sequence of float, optional
        Work in each task (e.g. rows), for ordering and for the progress bar.
    progress : bool
        Show a progress bar on stderr.
    description, unit : str
        Progress-bar label and the unit of the weights.
    start_cost : float, optional
        Time [s] a local worker takes to start (default :data:`WORKER_START_SECONDS`).
        Tasks run in this process while ``t_last * left * (1 - 1/workers) <= start_cost``
        (``t_last`` [s] the last task's time, ``left`` the tasks left; judged from the
        second task on, since the first also pays first-call costs); the rest go to a
        pool once it is exceeded. 0 starts the pool at once. Each task runs the same
        function either way, so the answers do not depend on where it ran.

    Returns
    -------
    list
        ``func(task)`` for each task.
    """
    tasks = list(tasks)
    start_cost = WORKER_START_SECONDS if start_cost is None else float(start_cost)
    weights = [1.0] * len(tasks) if weights is None else [float(w) for w in weights]
    order = sorted(range(len(tasks)), key=lambda i: -weights[i])
    bar = tqdm(total=sum(weights), desc=description, unit=unit, disable=not progress,
               leave=False, dynamic_ncols=True)
    results: list = [None] * len(tasks)
    try:
        if scheduler is not None:
            _run_dask(func, tasks, order, weights, scheduler, results, bar)
            return results
        workers = default_workers() if workers is None else int(workers)
        if workers < 1:
            raise InputError("workers", f"{workers} is not a number of processes",
                             "give 1 or more")
        left, done = list(order), 0
        while left and (workers == 1 or len(left) <= 1 or start_cost > 0):
            i = left.pop(0)
            start = time.perf_counter()
            results[i] = func(tasks[i])
            bar.update(weights[i])
            done += 1
            pooled = min(workers, len(left))
            # the first task also pays this process's first-call costs: judge on the second
            if done >= 2 and pooled > 1 and ((time.perf_counter() - start) * len(left)
                                             * (1 - 1 / pooled) > start_cost):
                break
        if not left:
            return results
        context = multiprocessing.get_context("spawn")
        with ProcessPoolExecutor(max_workers=min(workers, len(left)),
                                 mp_context=context) as pool:
            futures = {pool.submit(func, tasks[i]): i for i in left}
            for future in as_completed(futures):
                i = futures[future]
                results[i] = future.result()
                bar.update(weights[i])
        return results
    finally:
        bar.close()


def _run_dask(func, tasks, order, weights, scheduler, results, bar) -> None:
    try:
        from distributed import Client
        from distributed import as_completed as dask_completed
    except ImportError:
        raise InputError("--scheduler", "Dask's distributed package is not installed",
                         "pip install 'trainopt[studies]'") from None
    own = not isinstance(scheduler, Client)
    if own:
        try:
            client = Client(str(scheduler), timeout="10s", set_as_default=False)
        except OSError as exc:
            raise InputError("--scheduler", f"cannot reach a Dask scheduler at {scheduler} "
                             f"({exc})", "start one with 'dask scheduler' and give its "
                             "address, e.g. tcp://10.0.0.5:8786") from None
    else:
        client = scheduler
    try:
        futures = {client.submit(func, tasks[i], pure=False): i for i in order}
        for future in dask_completed(list(futures), loop=client.loop):
            i = futures[future]
            results[i] = future.result()
            bar.update(weights[i])
    finally:
        if own:
            client.close()

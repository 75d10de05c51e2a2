"""Independent tasks on one process, a local process pool, or a Dask cluster.

Stages, hypotheses and Monte Carlo draws are independent tasks. :class:`Executor` runs a
function over a list of tasks and returns the results in the order of the tasks, whatever
the order in which they finish, so the numbers do not depend on where they ran:

* ``jobs = 1`` (default): in this process;
* ``jobs = N``: a local process pool of N workers (:class:`concurrent.futures.ProcessPoolExecutor`);
* ``scheduler = "tcp://host:port"``: a Dask cluster (``dask.distributed``, the optional
  extra ``plate-torque-balance[cluster]``), or ``"local:N"`` for a :class:`distributed.LocalCluster` of N
  worker processes on this machine.

Every task runs with one BLAS thread, so a sum inside linear algebra is added in the same
order on every executor (results agree to the last bit, tested). Random draws get their
own seeds from :func:`spawn_seeds` (numpy's :class:`~numpy.random.SeedSequence`): draw i has
the same numbers however the draws are split into tasks.
"""

from __future__ import annotations

import functools
import threading

import numpy as np

from .errors import InputError

__all__ = ["small_solves", "spawn_seeds", "Executor"]


def small_solves():
    """A context in which BLAS runs on one thread.

    The balance solves many small dense systems (3P x 3P, a few hundred rows): threads cost
    more than they give there, and on a busy machine a threaded BLAS can take a hundred
    times longer per solve. Fits, predictions, ranking and resampling run inside this.

    Returns
    -------
    context manager
        Nested uses limit once: the outermost sets the limit, the inner ones do nothing
        (asking threadpoolctl scans the loaded libraries, about 1.5 ms a time).
    """
    return _OneThread()


@functools.lru_cache(maxsize=1)
def _blas_controller():
    from threadpoolctl import ThreadpoolController
    return ThreadpoolController()


class _OneThread:
    """BLAS on one thread for the outermost ``with`` of this thread (see small_solves)."""

    _depth = threading.local()

    def __enter__(self):
        depth = getattr(self._depth, "n", 0)
        self._depth.n = depth + 1
        self._limit = _blas_controller().limit(limits=1, user_api="blas") if depth == 0 \
            else None
        return self

    def __exit__(self, *exc):
        self._depth.n -= 1
        if self._limit is not None:
            self._limit.restore_original_limits()
        return False


def spawn_seeds(seed, n: int) -> list:
    """``n`` independent child seeds of ``seed`` (one per draw or task).

    Parameters
    ----------
    seed : int or None
    n : int

    Returns
    -------
    list of numpy.random.SeedSequence

    Examples
    --------
    >>> a = [np.random.default_rng(s).random() for s in spawn_seeds(7, 3)]
    >>> b = [np.random.default_rng(s).random() for s in spawn_seeds(7, 3)]
    >>> a == b and len(set(a)) == 3
    True
    """
    return np.random.SeedSequence(seed).spawn(n)


def _warm_up(modules):
    """Import what the tasks use, once per worker (not in the first task's time)."""
    import importlib
    for m in modules:
        importlib.import_module(m)
    return True


def _one_thread(func, item, shared=None, with_shared=False):
    with small_solves():
        return func(shared, item) if with_shared else func(item)


class Executor:
    """Runs ``func`` over tasks, here, on a local pool, or on a Dask cluster.

    Parameters
    ----------
    jobs : int
        Worker processes of a local pool; 1 runs in this process.
    scheduler : str, optional
        A Dask scheduler address (``tcp://host:port``), or ``local:N`` for a local Dask
        cluster of N workers. Overrides ``jobs``.
    preload : sequence of str
        Modules each Dask worker imports when the executor starts, so that the first
        tasks do not pay for it.

    Examples
    --------
    >>> with Executor(jobs=1) as ex:
    ...     ex.map(abs, [-2, 3, -5])
    [2, 3, 5]
    """

    def __init__(self, jobs: int = 1, scheduler: str | None = None, preload=()):
        if not isinstance(jobs, int) or jobs < 1:
            raise InputError(f"--jobs must be a whole number of at least 1, got {jobs!r}")
        self.jobs = jobs
        self.scheduler = scheduler
        self.preload = tuple(preload)
        self._pool = self._client = self._cluster = None

    def __repr__(self) -> str:
        return f"Executor({self.describe()})"

    def describe(self) -> str:
        """Where the tasks run, in words (for the run manifest)."""
        if self.scheduler:
            return f"Dask scheduler {self.scheduler}"
        return "this process" if self.jobs == 1 else f"a local pool of {self.jobs} processes"

    def __enter__(self) -> "Executor":
        if self.scheduler:
            try:
                from dask.distributed import Client, LocalCluster
            except ImportError:
                raise InputError("a Dask scheduler needs dask.distributed", hint="pip "
                                 "install the cluster extra: pip install -e '.[cluster]'") from None
            if self.scheduler.startswith("local:"):
                n = int(self.scheduler.split(":", 1)[1] or 2)
                self._cluster = LocalCluster(n_workers=n, threads_per_worker=1,
                                             processes=True, dashboard_address=None)
                self._client = Client(self._cluster)
            else:
                try:
                    self._client = Client(self.scheduler, timeout=30)
                except OSError as exc:
                    raise InputError(f"cannot reach the Dask scheduler {self.scheduler}: "
                                     f"{exc}") from None
            self._client.run(_warm_up, self.preload)
        elif self.jobs > 1:
            from concurrent.futures import ProcessPoolExecutor
            self._pool = ProcessPoolExecutor(max_workers=self.jobs)
        return self

    def __exit__(self, *exc):
        if self._pool is not None:
            self._pool.shutdown()
        if self._client is not None:
            self._client.close()
        if self._cluster is not None:
            self._cluster.close()
        self._pool = self._client = self._cluster = None

    def map(self, func, items, progress_bar=None, shared=None) -> list:
        """``[func(item) for item in items]`` (or ``func(shared, item)``), run where this
        executor runs tasks.

        Parameters
        ----------
        func : callable
            A module-level function (it is sent to other processes by pickling).
        items : sequence
        progress_bar : optional
            An object with ``update()``, called as each task finishes.
        shared : object, optional
            Data every task needs (say, every stage's balance): sent to each Dask worker
            once rather than with every task; given, ``func`` is called as
            ``func(shared, item)``.

        Returns
        -------
        list
            In the order of ``items``.
        """
        items = list(items)
        with_shared = shared is not None
        if self._client is not None:
            from dask.distributed import as_completed
            data = self._client.scatter(shared, broadcast=True) if with_shared else None
            futures = self._client.map(_one_thread, [func] * len(items), items,
                                       [data] * len(items), [with_shared] * len(items),
                                       pure=False)
            for _ in as_completed(futures):
                if progress_bar is not None:
                    progress_bar.update()
            return self._client.gather(futures)
        if self._pool is not None:
            from concurrent.futures import as_completed
            futures = [self._pool.submit(_one_thread, func, it, shared, with_shared)
                       for it in items]
            for _ in as_completed(futures):
                if progress_bar is not None:
                    progress_bar.update()
            return [f.result() for f in futures]
        out = []
        for it in items:
            out.append(_one_thread(func, it, shared, with_shared))
            if progress_bar is not None:
                progress_bar.update()
        return out

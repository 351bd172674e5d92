"""Where a ranking's tasks run: in this process, a local process pool, or a Dask cluster.

Design layer, the engine behind :mod:`~symbias.design.rank`.  Candidates and
Monte Carlo chunks are independent tasks handed to a
:class:`concurrent.futures.Executor`; this module only chooses which one,
never schedules anything itself:

* :class:`SerialExecutor`: each task runs when it is submitted (the default);
* ``workers=N``: a :class:`concurrent.futures.ProcessPoolExecutor` of N processes;
* ``scheduler=ADDRESS``: the executor of a Dask ``distributed`` client connected to
  that scheduler (``pip install 'symbias[distributed]'``).

Everything a task carries pickles (topologies, circuits, specs, operating points).

Examples
--------
>>> with executor_for() as pool:
...     pool.submit(pow, 2, 10).result()
1024
"""

from __future__ import annotations

import concurrent.futures
from contextlib import contextmanager
from typing import Iterator

from ..errors import UsageError

__all__ = ["SerialExecutor", "executor_for", "describe"]


class SerialExecutor(concurrent.futures.Executor):
    """Run each task in the calling process when it is submitted (its future is already done)."""

    def submit(self, fn, /, *args, **kwargs) -> concurrent.futures.Future:
        future: concurrent.futures.Future = concurrent.futures.Future()
        try:
            future.set_result(fn(*args, **kwargs))
        except Exception as err:  # the future carries its task's exception, as every executor's futures do
            future.set_exception(err)
        return future


def describe(workers: int | None = None, scheduler: str | None = None) -> str:
    """How the tasks run, in words (for reports).

    Examples
    --------
    >>> describe(), describe(workers=2), describe(scheduler="tcp://10.0.0.5:8786")
    ('serial', '2 local processes', 'Dask cluster at tcp://10.0.0.5:8786')
    """
    if scheduler:
        return f"Dask cluster at {scheduler}"
    if workers and workers > 1:
        return f"{workers} local processes"
    return "serial"


@contextmanager
def executor_for(workers: int | None = None, scheduler: str | None = None) -> Iterator[concurrent.futures.Executor]:
    """The executor for ``--workers`` / ``--scheduler`` (serial when neither), shut down on exit.

    Raises
    ------
    UsageError
        For a worker count below 1, both options at once, Dask's ``distributed`` not
        installed, or a scheduler that cannot be reached.
    """
    if workers is not None and workers < 1:
        raise UsageError(f"--workers must be at least 1, got {workers}", path="--workers")
    if scheduler and workers and workers > 1:
        raise UsageError("give --workers or --scheduler, not both (the cluster has its own workers)",
                         path="--scheduler")
    if scheduler:
        with _dask(scheduler) as executor:
            yield executor
    elif workers and workers > 1:
        with concurrent.futures.ProcessPoolExecutor(max_workers=workers) as executor:
            yield executor
    else:
        yield SerialExecutor()


@contextmanager
def _dask(address: str) -> Iterator[concurrent.futures.Executor]:
    try:
        from distributed import Client
    except ImportError:
        raise UsageError("--scheduler needs Dask's distributed package: pip install 'symbias[distributed]'",
                         path="--scheduler") from None
    try:
        client = Client(address, timeout=10)
    except (OSError, TimeoutError) as err:
        raise UsageError(f"cannot reach the Dask scheduler at {address}: {err}", path="--scheduler") from None
    try:
        with client.get_executor(pure=False) as executor:
            yield executor
    finally:
        client.close()

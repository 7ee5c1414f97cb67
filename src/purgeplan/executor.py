"""Where tasks run: in-process, on a local process pool, or on a Dask distributed cluster.

A task is a pure function applied to plain, picklable data.  :func:`map_tasks`
yields each result with the task's position as it finishes, so callers
merge them in a fixed order whatever order they finish in, and keep what
has finished when the run is interrupted.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from typing import Any


def map_tasks(fn: Callable[[Any], Any], tasks: Sequence, jobs: int = 1, client=None
              ) -> Iterator[tuple[int, Any]]:
    """Apply ``fn`` to every task; yields (position, result) as each finishes.

    Parameters
    ----------
    jobs : int
        1 runs in-process, in order; more uses a local process pool of that size.
    client : dask.distributed.Client, optional
        Sends the tasks to a Dask cluster instead.

    Closing the iterator early (or Ctrl-C) cancels the tasks not yet started.
    """
    if client is not None:
        from dask.distributed import as_completed

        futures = client.map(fn, list(tasks), pure=False)
        position = {f.key: i for i, f in enumerate(futures)}
        try:
            for fut in as_completed(futures):
                yield position[fut.key], fut.result()
        finally:
            client.cancel([f for f in futures if not f.done()])
    elif jobs > 1 and len(tasks) > 1:
        from concurrent.futures import ProcessPoolExecutor, as_completed

        pool = ProcessPoolExecutor(max_workers=jobs)
        try:
            futures = {pool.submit(fn, t): i for i, t in enumerate(tasks)}
            for fut in as_completed(futures):
                yield futures[fut], fut.result()
        finally:
            pool.shutdown(wait=True, cancel_futures=True)
    else:
        for i, t in enumerate(tasks):
            yield i, fn(t)

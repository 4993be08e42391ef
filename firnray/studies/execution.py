"""Running a grid study in chunks: in this process, a process pool or any Executor.

A study cuts its grid into chunks; each chunk is a task (a plain dict of
floats and arrays) handed to a module-level pure function, so it pickles to
a process pool or a dask cluster (``distributed.Client.get_executor()``)
unchanged.  Results are handed back to the caller in completion order.
"""

import concurrent.futures as cf


def chunk_slices(n, size):
    """Slices cutting range(n) into consecutive pieces of at most ``size``."""
    return [slice(i, min(i + size, n)) for i in range(0, n, size)]


def run_tasks(func, tasks, executor=None, max_workers=None):
    """Yield ``(key, result)`` for each ``(key, task)`` as it finishes.

    If a task fails, the results of all the others are still yielded, then
    the first failure is raised.

    Parameters
    ----------
    func : callable
        Module-level function of one task (picklable).
    tasks : list of (key, dict)
        The tasks to run.
    executor : None, "processes" or concurrent.futures.Executor
        None runs the tasks one after the other in this process (each may use
        every numba thread); "processes" starts a local process pool of
        ``max_workers``; an Executor instance (a thread or process pool, or a
        dask client's executor) is used as it is and left running.
    max_workers : int, optional
        Size of the local process pool.
    """
    if executor is None:
        for key, task in tasks:
            yield key, func(task)
        return
    own = None
    if isinstance(executor, str):
        if executor != "processes":
            raise ValueError(f"executor must be None, 'processes' or a "
                             f"concurrent.futures.Executor, got {executor!r}")
        own = executor = cf.ProcessPoolExecutor(max_workers=max_workers)
    elif not hasattr(executor, "submit"):
        raise ValueError(f"executor must be None, 'processes' or a "
                         f"concurrent.futures.Executor, got {executor!r}")
    failure = None
    try:
        futures = {executor.submit(func, task): key for key, task in tasks}
        for fut in cf.as_completed(futures):
            try:
                result = fut.result()
            except Exception as err:  # keep every other finished chunk, then re-raise
                failure = failure or err
                continue
            yield futures[fut], result
        if failure is not None:
            raise failure
    finally:
        if own is not None:
            own.shutdown(cancel_futures=True)

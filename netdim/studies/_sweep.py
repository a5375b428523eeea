"""Independent pieces of a study, run one after another or on a local process pool.

Every study hands :func:`run_all` a picklable function of ``(shared, item)``, the data all
pieces share (the network, capacities, options) and the items; results come back in the
items' order, so a pool gives the same result as a serial run (each piece is
deterministic, or seeded the same way in either case). The shared data reaches each worker
once, not with every item: inherited by a forked worker, or sent once to its initializer
where processes are spawned.
"""

from __future__ import annotations

import multiprocessing
from concurrent.futures import ProcessPoolExecutor, as_completed
from concurrent.futures.process import BrokenProcessPool

from netdim.errors import NetdimError

__all__ = ["run_all", "check_workers", "check_scheduler", "MAX_WORKERS"]

#: Most worker processes a study starts (a guard against a typing mistake).
MAX_WORKERS = 256

#: Seconds to wait for a Dask scheduler to answer.
CONNECT_TIMEOUT = 30

#: The shared data of the sweep a worker serves (set in the parent before a fork, or by
#: the initializer of a spawned worker).
_SHARED = None


def check_workers(workers) -> int:
    """``workers`` as a positive int (None: 1, serial); ValueError naming it otherwise."""
    if workers is None:
        return 1
    if isinstance(workers, bool) or not isinstance(workers, int) or not \
            1 <= workers <= MAX_WORKERS:
        raise ValueError(f"workers: must be an integer in 1..{MAX_WORKERS}, got {workers!r}")
    return workers


def _init(shared):
    global _SHARED
    _SHARED = shared


def _run_chunk(task):
    func, chunk = task
    return [func(_SHARED, item) for item in chunk]


def _context(fork):
    """Fork where asked and the platform has it (a worker starts with this process's
    imports and compiled kernels, no copy of the data), else spawn. Sizing studies spawn:
    a solver's thread pool in this process would be copied half-made into a forked child."""
    methods = multiprocessing.get_all_start_methods()
    return multiprocessing.get_context("fork" if fork and "fork" in methods else "spawn")


def _dask_piece(shared, func, item):
    return func(shared, item)


def check_scheduler(scheduler):
    """None, or a Dask scheduler address (``'tcp://host:8786'``) or ``Client``."""
    if scheduler is None or hasattr(scheduler, "scatter"):
        return scheduler
    if not isinstance(scheduler, str) or not scheduler.strip():
        raise ValueError(f"scheduler: expected an address such as tcp://host:8786, got "
                         f"{scheduler!r}")
    return scheduler.strip()


def _run_on_dask(func, items, shared, scheduler, progress, what):
    """The pieces as Dask tasks on the cluster at ``scheduler`` (an address or a Client);
    the shared data is sent once to every worker."""
    try:
        # optional: only a sweep on a Dask cluster needs dask.distributed (netdim[dask])
        from dask.distributed import Client
        from dask.distributed import as_completed as dask_completed
    except ImportError:
        raise NetdimError("scheduler: a sweep on a Dask cluster needs dask.distributed "
                          "(pip install 'netdim[dask]')") from None
    own = not hasattr(scheduler, "scatter")
    try:
        client = Client(scheduler, timeout=CONNECT_TIMEOUT) if own else scheduler
    except (OSError, TimeoutError) as exc:
        raise NetdimError(f"scheduler: cannot reach {scheduler}: "
                          f"{' '.join(str(exc).split()) or type(exc).__name__}") from None
    try:
        data = client.scatter(shared, broadcast=True)
        futures = client.map(_dask_piece, [data] * len(items), [func] * len(items), items,
                             pure=False)
        order = {f.key: i for i, f in enumerate(futures)}
        results = [None] * len(items)
        done = 0
        for fut in dask_completed(futures):
            results[order[fut.key]] = fut.result()
            done += 1
            if progress is not None:
                progress(done / len(items), f"{done}/{len(items)} {what}")
        return results
    finally:
        if own:
            client.close()


def run_all(func, items, *, shared=None, workers=1, progress=None, what="pieces",
            fork=True, scheduler=None) -> list:
    """``[func(shared, item) for item in items]``, on ``workers`` processes when more than one.

    Parameters
    ----------
    func : callable
        A module-level function of ``(shared, item)`` (it is pickled to the workers).
    items : sequence
    shared : object
        What every piece needs (picklable).
    workers : int
        1 runs in this process; more start a pool of that many processes. Items go out in
        chunks (about four per worker), so that few messages carry many pieces.
    progress : callable(fraction, message) or None
        Called after each piece (serial) or chunk (pool) with the share done.
    what : str
        What a piece is, for the progress message.
    fork : bool
        Workers may be forked (pieces that evaluate only); False spawns them (pieces that
        call a MILP solver).
    scheduler : str, Client or None
        Run the pieces on a Dask distributed cluster instead (its address, or a
        ``dask.distributed.Client``); ``workers`` is then ignored.

    Returns
    -------
    list
        The results in the order of ``items``.
    """
    global _SHARED
    items = list(items)
    total = len(items)
    if scheduler is not None and total:
        return _run_on_dask(func, items, shared, scheduler, progress, what)
    if workers <= 1 or total <= 1:
        out = []
        for item in items:
            out.append(func(shared, item))
            if progress is not None:
                progress(len(out) / total, f"{len(out)}/{total} {what}")
        return out
    n = min(workers, total)
    size = max(1, -(-total // (4 * n)))
    chunks = [items[i:i + size] for i in range(0, total, size)]
    context = _context(fork)
    results = [None] * len(chunks)
    previous, _SHARED = _SHARED, shared  # a forked worker inherits it
    try:
        init = {} if context.get_start_method() == "fork" else \
            {"initializer": _init, "initargs": (shared,)}
        with ProcessPoolExecutor(max_workers=n, mp_context=context, **init) as pool:
            futures = {pool.submit(_run_chunk, (func, c)): i for i, c in enumerate(chunks)}
            done = 0
            for fut in as_completed(futures):
                i = futures[fut]
                results[i] = fut.result()
                done += len(chunks[i])
                if progress is not None:
                    progress(done / total, f"{done}/{total} {what}")
    except BrokenProcessPool:
        raise NetdimError(f"workers: a worker process stopped abruptly ({n} workers); run "
                          "with one worker to see why") from None
    finally:
        _SHARED = previous
    return [r for chunk in results for r in chunk]

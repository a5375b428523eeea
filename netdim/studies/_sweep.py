"""Independent pieces of a study, run one after another or on a local process pool.

Every study hands :func:`run_all` a picklable function of one argument and the items to
apply it to; results come back in the items' order, so a pool gives the same result as a
serial run (each piece is deterministic, or seeded the same way in either case).
"""

from __future__ import annotations

import multiprocessing
from concurrent.futures import ProcessPoolExecutor, as_completed

__all__ = ["run_all", "check_workers"]

#: Most worker processes a study starts (a guard against a typing mistake).
MAX_WORKERS = 256


def check_workers(workers) -> int:
    """``workers`` as a positive int (None: 1, serial); ValueError naming it otherwise."""
    if workers is None:
        return 1
    if isinstance(workers, bool) or not isinstance(workers, int) or not \
            1 <= workers <= MAX_WORKERS:
        raise ValueError(f"workers: must be an integer in 1..{MAX_WORKERS}, got {workers!r}")
    return workers


def _say(progress, done, total, what):
    if progress is not None:
        progress(done / total if total else 1.0, f"{done}/{total} {what}")


def run_all(func, items, *, workers=1, progress=None, what="pieces") -> list:
    """``[func(item) for item in items]``, on ``workers`` processes when more than one.

    Parameters
    ----------
    func : callable
        A module-level function (it is pickled to the workers).
    items : sequence
    workers : int
        1 runs in this process; more start a pool of that many processes (spawned, so that
        no solver or compiled-code state is copied half-made into a child).
    progress : callable(fraction, message) or None
        Called after each piece with the share done.
    what : str
        What a piece is, for the progress message.

    Returns
    -------
    list
        The results in the order of ``items``.
    """
    items = list(items)
    total = len(items)
    if workers <= 1 or total <= 1:
        out = []
        for item in items:
            out.append(func(item))
            _say(progress, len(out), total, what)
        return out
    n = min(workers, total)
    context = multiprocessing.get_context("spawn")
    results = [None] * total
    with ProcessPoolExecutor(max_workers=n, mp_context=context) as pool:
        futures = {pool.submit(func, item): i for i, item in enumerate(items)}
        done = 0
        for fut in as_completed(futures):
            results[futures[fut]] = fut.result()
            done += 1
            _say(progress, done, total, what)
    return results


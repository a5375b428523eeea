"""Options shared by the study commands (failures, growth, headroom, compare)."""

from __future__ import annotations

import argparse
import sys
import time

__all__ = ["fraction", "id_list", "add_common", "progress_for", "positive_int"]


def fraction(text: str) -> float:
    """``'5%'`` or ``'0.05'`` as 0.05 (argparse type)."""
    t = text.strip()
    try:
        value = float(t[:-1]) / 100 if t.endswith("%") else float(t)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected a share such as 5% or 0.05, got {text!r}") from None
    if value != value or value in (float("inf"), float("-inf")):
        raise argparse.ArgumentTypeError(f"expected a finite share, got {text!r}")
    return value


def positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got {text!r}")
    return value


def id_list(text: str) -> tuple:
    """``'A,B'`` as ``('A', 'B')`` (argparse type)."""
    ids = tuple(w.strip() for w in text.split(",") if w.strip())
    if not ids:
        raise argparse.ArgumentTypeError(f"expected ids separated by commas, got {text!r}")
    return ids


def add_common(p, *, workers=True) -> None:
    """--json, --csv DIR, --quiet (and --workers N)."""
    p.add_argument("--json", action="store_true", help="print the result as JSON")
    p.add_argument("--csv", metavar="DIR", help="also write the table as CSV into DIR")
    if workers:
        p.add_argument("--workers", type=positive_int, default=1, metavar="N",
                       help="run the independent evaluations on N processes (default 1); "
                       "the result is the same")
        p.add_argument("--scheduler", default=None, metavar="ADDRESS",
                       help="run them on the Dask cluster at ADDRESS instead (e.g. "
                       "tcp://host:8786; needs netdim[dask]); the result is the same")
    p.add_argument("--quiet", action="store_true", help="no progress lines on stderr")


def progress_for(args, command):
    """A progress bar on stderr for a study (tqdm), none with --quiet or when stderr is not
    a terminal. Without tqdm, a line every 2 s after the first 2 s."""
    if args.quiet or not sys.stderr.isatty():
        return None
    try:
        # optional: the bar is tqdm's; without it the study prints plain lines
        from tqdm import tqdm
    except ImportError:
        return _lines(command)
    # no monitor thread: a study may fork its workers, and a fork copies no other thread
    tqdm.monitor_interval = 0
    bar = tqdm(total=1000, file=sys.stderr, desc=f"netdim {command}", leave=False,
               bar_format="{desc}: {percentage:3.0f}%|{bar}| {postfix} [{elapsed}<{remaining}]")

    def progress(share, message):
        if share is not None:
            bar.update(max(0, round(1000 * share) - bar.n))
        bar.set_postfix_str(message, refresh=True)
        if share is not None and share >= 1.0:
            bar.close()

    return progress


def _lines(command):
    start = time.monotonic()
    last = [start]

    def progress(share, message):
        now = time.monotonic()
        if now - start < 2.0 or now - last[0] < 2.0:
            return
        last[0] = now
        pct = "" if share is None else f"{100 * share:.0f}% "
        print(f"netdim {command}: {pct}{message}", file=sys.stderr, flush=True)

    return progress

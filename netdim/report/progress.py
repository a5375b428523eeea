"""Progress lines a reader can follow: a few summary lines, or the whole trace.

Long commands (``netdim size``) report their work through one callback,
``progress(fraction, message)``, often tens of times a second. :class:`ProgressSummary`
turns that stream into a few lines: the work is split into stages (sizing, the lower bound,
the verification by simulation), and of each stage the first and the last message are shown,
with one more line now and then when a stage runs long. Given ``verbose=True`` it passes
every message on. It prints nothing itself: it hands each line to ``emit``.
"""

from __future__ import annotations

import re
import time

__all__ = ["ProgressSummary", "stage_of"]

#: Message beginnings and the stage they belong to; any other message is a stage of its own,
#: named by its first word.
_STAGES = (
    ("iteration", "sizing"),
    ("trying without link", "sizing"),
    ("local search", "sizing"),
    ("repairing", "sizing"),
    ("net value", "sizing"),
    ("lower bound", "bound"),
    ("round", "bound"),
    ("MILP round", "bound"),
    ("listing", "bound"),
    ("verifying", "verify"),
    ("verify round", "verify"),
)


def stage_of(message: str) -> str:
    """The stage a progress message belongs to (``'sizing'``, ``'bound'``, ``'verify'``, or
    the message's first word)."""
    text = message.strip()
    for start, stage in _STAGES:
        if text.startswith(start):
            return stage
    m = re.match(r"[A-Za-z-]+", text)
    return m.group(0) if m else text


class ProgressSummary:
    """A ``progress(fraction, message)`` callback that hands ``emit`` a few lines.

    Parameters
    ----------
    emit : callable
        ``emit(line)`` for each line to show (the command prints it on stderr).
    verbose : bool
        Pass every message on (the full trace).
    every : float
        Seconds: within a long stage, one more line when this long has passed since the last.
    clock : callable
        Seconds, monotonic (a test passes its own).

    Notes
    -----
    Call :meth:`close` when the work is done: it shows the last message of the last stage.
    """

    def __init__(self, emit, *, verbose=False, every=10.0, clock=time.monotonic):
        self._emit = emit
        self._verbose = verbose
        self._every = float(every)
        self._clock = clock
        self._stage = None
        self._pending = None  # the stage's last message, not yet shown
        self._last = clock()

    def _show(self, fraction, message):
        share = "" if fraction is None else f"{100 * fraction:.0f}% "
        self._emit(f"{share}{message}")
        self._last = self._clock()
        self._pending = None

    def __call__(self, fraction, message):
        if self._verbose:
            self._show(fraction, message)
            return
        stage = stage_of(message)
        if stage != self._stage:
            if self._pending is not None:
                self._show(*self._pending)
            self._stage = stage
            self._show(fraction, message)
        elif self._clock() - self._last >= self._every:
            self._show(fraction, message)
        else:
            self._pending = (fraction, message)

    def close(self):
        """Show the last message of the last stage, if not shown yet."""
        if self._pending is not None:
            self._show(*self._pending)

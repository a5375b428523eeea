"""Verdicts of a study, from an evaluation's figures only.

A study never says more than its figures do: where the fixed point has two solutions
(``bistable``), a demand is ``met`` only when both solutions meet the target and
``missed`` only when both miss it; a simulated interval that contains the target stays
``unclear``.
"""

from __future__ import annotations

import numpy as np

from netdim.evaluate import verdicts
from netdim.vocabulary import Verdict

__all__ = ["judge", "overall", "SEVERITY", "check_target"]

#: Order of verdicts, worst first (a row sorts by this, then by its figures).
SEVERITY = {Verdict.MISSED.value: 0, Verdict.UNCLEAR.value: 1, Verdict.MET.value: 2}


def judge(evaluation, target=None) -> np.ndarray:
    """Per demand of ``evaluation``, its verdict against ``target`` (default: its own).

    Parameters
    ----------
    evaluation : Evaluation
    target : array_like or None
        Per demand (or one value for all); None uses ``evaluation.target``.

    Returns
    -------
    ndarray of str
        ``'met'``, ``'missed'`` or ``'unclear'`` per demand.
    """
    t = evaluation.target if target is None else np.broadcast_to(
        np.asarray(target, float), evaluation.blocking.shape)
    v = verdicts(evaluation.blocking, t, evaluation.blocking_interval)
    alt = evaluation.alternative
    if alt is not None:
        w = verdicts(alt.blocking, t, alt.blocking_interval)
        v = np.where(v == w, v, Verdict.UNCLEAR.value)
    return v


def overall(values) -> Verdict:
    """One verdict for many: missed if any is, else unclear if any is, else met."""
    values = {str(v) for v in values}
    if Verdict.MISSED.value in values:
        return Verdict.MISSED
    if Verdict.UNCLEAR.value in values:
        return Verdict.UNCLEAR
    return Verdict.MET


def check_target(name, value):
    """A blocking target in (0, 1), or None; ValueError naming ``name`` otherwise."""
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating)) \
            or not 0 < value < 1:
        raise ValueError(f"{name}: must lie in (0, 1), got {value!r}")
    return float(value)

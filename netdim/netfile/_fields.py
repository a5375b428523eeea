"""Field readers that collect the problems of a network file instead of raising.

Private to :mod:`netdim.netfile`. A :class:`FieldReader` reads one field at a time from a
:class:`~netdim.netfile._yaml.Map`, checks its type, finiteness and range, and on a problem
records one line ``FILE:LINE: ITEM: problem`` and returns :data:`BAD`, so that one reading
reports every problem in the file.
"""

from __future__ import annotations

import difflib
import math

from netdim.errors import NetworkFileError
from netdim.netfile._yaml import BadNumber, Map, line_of

__all__ = ["FieldReader", "BAD", "MAX_PROBLEMS", "kind", "show", "unknown"]

#: Most problems reported from one file (the rest are counted).
MAX_PROBLEMS = 50

#: A field that was present but wrong (already reported).
BAD = object()

_LONGEST_SHOWN = 40


class FieldReader:
    """Reads fields and collects problems, each ``SOURCE:LINE: ITEM: problem``.

    Parameters
    ----------
    source : str
        The file name used in every message.
    """

    def __init__(self, source):
        self.source = source
        self.problems = []

    def add(self, line, item, text):
        self.problems.append((line, f"{self.source}:{line}: {item}: {text}"))

    def raise_if_any(self):
        """Raise one :class:`NetworkFileError` with every problem, in file order."""
        if self.problems:
            self.problems.sort(key=lambda p: p[0])  # stable: same line keeps its order
            shown = [text for _, text in self.problems[:MAX_PROBLEMS]]
            if len(self.problems) > MAX_PROBLEMS:
                shown.append(
                    f"{self.source}: and {len(self.problems) - MAX_PROBLEMS} more problems "
                    "not shown"
                )
            raise NetworkFileError(shown)

    # -- keys ---------------------------------------------------------------------------------
    def keys(self, m, valid, item, keep=()):
        """Report unknown keys; return how many there were."""
        count = 0
        for key in m:
            if key in valid or (isinstance(key, str) and key.startswith(keep or "\0")):
                continue
            self.add(line_of(m, key), item, unknown(f"unknown key {show(key)}", key, valid))
            count += 1
        return count

    def mapping(self, value, line, item, what):
        if isinstance(value, Map):
            return value
        self.add(line, item, f"{what} must be a mapping (key: value), got {kind(value)}")
        return None

    # -- scalars ------------------------------------------------------------------------------
    def number(self, m, key, item, default=None, *, integer=False, low=None, low_open=False,
               high=None, high_open=False, high_note="", required=False):
        """Read a finite number within ``[low, high]``; report and return ``BAD`` when it is
        wrong."""
        line = line_of(m, key)
        if key not in m or m[key] is None:
            if required:
                self.add(line, item, f"'{key}' is missing")
                return BAD
            return default
        raw = m[key]
        if isinstance(raw, BadNumber):
            self.add(line, item, f"{key} must be a number, got {raw.why}")
            return BAD
        value = _as_number(raw)
        if value is None:
            self.add(line, item, f"{key} must be a number, got {show(raw)}")
            return BAD
        if isinstance(value, float) and math.isinf(value):
            self.add(line, item, f"{key} must be a finite number, got {show(raw)}")
            return BAD
        if integer and not isinstance(value, int):
            if not value.is_integer():
                self.add(line, item, f"{key} must be a whole number, got {show(raw)}")
                return BAD
            value = int(value)
        if low is not None and (value <= low if low_open else value < low):
            rel = ">" if low_open else ">="
            if high is not None and high_open and low_open:
                self.add(line, item, f"{key} must be in ({low:g}, {high:g}), got {show(raw)}")
            else:
                self.add(line, item, f"{key} must be {rel} {low:g}, got {show(raw)}")
            return BAD
        if high is not None and (value >= high if high_open else value > high):
            if high_open and low_open and low is not None:
                self.add(line, item, f"{key} must be in ({low:g}, {high:g}), got {show(raw)}")
            else:
                note = high_note or "an absurd magnitude; check the units"
                self.add(line, item, f"{key} {show(raw)} is too large ({note})")
            return BAD
        return value

    def ident(self, m, key, item, required=True):
        """Read an id (text, or a whole number taken as text)."""
        line = line_of(m, key)
        if key not in m or m[key] is None:
            if required:
                self.add(line, item, f"'{key}' is missing")
            return None
        return self.id_value(m[key], line, item, key)

    def id_value(self, raw, line, item, what):
        if isinstance(raw, bool):
            self.add(line, item, f"{what} must be text, got the yes/no value {raw!r} "
                     "(quote it)")
            return None
        if isinstance(raw, int):
            return str(raw)
        if isinstance(raw, str) and raw.strip():
            return str(raw)
        self.add(line, item, f"{what} must be text, got {show(raw)}")
        return None

    def text(self, m, key, item, default=None):
        if key not in m or m[key] is None:
            return default
        raw = m[key]
        if isinstance(raw, (str, int, float)) and not isinstance(raw, bool):
            return str(raw)
        self.add(line_of(m, key), item, f"{key} must be text, got {show(raw)}")
        return default

    def pair(self, m, key, item, site_ids):
        """Two distinct known site ids; None when wrong (reported)."""
        line = line_of(m, key)
        if key not in m or m[key] is None:
            self.add(line, item, f"'{key}' is missing (two site ids)")
            return None
        raw = m[key]
        if not isinstance(raw, list) or len(raw) != 2:
            self.add(line, item, f"{key} must be a list of two site ids, got {show(raw)}")
            return None
        ends = []
        for value in raw:
            sid = self.id_value(value, line, item, "site id")
            if sid is None:
                return None
            if site_ids is not None and sid not in site_ids:
                self.add(line, item, unknown(f"site {show(sid)} is not defined", sid,
                                             site_ids))
                return None
            ends.append(sid)
        if ends[0] == ends[1]:
            self.add(line, item, f"{key} names the same site {show(ends[0])} twice")
            return None
        return tuple(ends)


def _as_number(raw):
    """An int or float, or None when ``raw`` is not a number (NaN is not a number)."""
    if isinstance(raw, bool):
        return None
    if isinstance(raw, int):
        # whole numbers beyond a float's range are kept as int (range checks compare ints)
        return raw
    if isinstance(raw, float):
        value = raw
    elif isinstance(raw, str):
        # PyYAML reads '1e5' (no dot) as text; accept any plain decimal notation
        text = raw.strip()
        if len(text) > _LONGEST_SHOWN or not text:
            return None
        try:
            value = float(text)
        except ValueError:
            return None
    else:
        return None
    if math.isnan(value):
        return None
    return value


def show(raw) -> str:
    """A value as a message quotes it (long ones cut)."""
    if isinstance(raw, (list, dict)):
        return f"a {kind(raw)}"
    if isinstance(raw, int) and not isinstance(raw, bool) and abs(raw) > 10**30:
        return f"a number of {len(str(abs(raw)))} digits"
    text = repr(str(raw)) if isinstance(raw, str) else repr(raw)
    if len(text) > _LONGEST_SHOWN:
        return f"{text[:_LONGEST_SHOWN - 10]}...{text[-6:]} ({len(str(raw))} characters)"
    return text


def kind(raw) -> str:
    if raw is None:
        return "nothing"
    if isinstance(raw, dict):
        return "mapping"
    if isinstance(raw, list):
        return "list"
    if isinstance(raw, bool):
        return "yes/no value"
    if isinstance(raw, str):
        return f"text {show(raw)}"
    return f"{type(raw).__name__} {show(raw)}"


def unknown(what, name, valid) -> str:
    """``what``, with the closest valid name or the list of valid names."""
    name = str(name)
    if len(name) <= 100:
        close = difflib.get_close_matches(name, [str(v) for v in valid], n=1, cutoff=0.6)
        if close:
            return f"{what} (did you mean '{close[0]}'?)"
    if 0 < len(valid) <= 12:
        names = sorted(map(str, valid)) if isinstance(valid, (set, dict)) else list(
            map(str, valid))
        return f"{what} (valid: {', '.join(names)})"
    return what

"""YAML with line numbers, and the collector of problems found in a network file.

Private helpers of :mod:`netdim.netfile`: a loader whose mappings and sequences remember the
line of every key and item, and field readers that report a problem (``FILE:LINE: ITEM:
problem``) instead of raising, so that one reading reports every problem in the file.
"""

from __future__ import annotations

import difflib
import math
import re

import yaml

from netdim.errors import NetworkFileError

#: Most problems reported from one file (the rest are counted).
MAX_PROBLEMS = 50

BAD = object()  # a field that was present but wrong (already reported)


# --------------------------------------------------------------------------------------------
# YAML with line numbers
# --------------------------------------------------------------------------------------------
class Map(dict):
    """A mapping that remembers its line and the line of each key (1-based)."""

    line = 1
    lines: dict


class Seq(list):
    """A sequence that remembers its line and the line of each item (1-based)."""

    line = 1
    lines: list


# libyaml's parser when PyYAML has it (same marks, several times faster on big files)
_BaseLoader = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


class Loader(_BaseLoader):
    """SafeLoader that builds :class:`Map` / :class:`Seq` and notes duplicate keys."""

    def __init__(self, stream):
        super().__init__(stream)
        self.key_problems = []  # (line, text)


def _construct_map(loader, node):
    loader.flatten_mapping(node)
    out = Map()
    out.line = node.start_mark.line + 1
    out.lines = {}
    for knode, vnode in node.value:
        key = loader.construct_object(knode, deep=True)
        kline = knode.start_mark.line + 1
        try:
            hash(key)
        except TypeError:
            loader.key_problems.append((kline, "a key must be plain text"))
            continue
        if key in out:
            loader.key_problems.append(
                (kline, f"duplicate key '{key}' (first on line {out.lines[key]})")
            )
            continue
        out[key] = loader.construct_object(vnode, deep=True)
        out.lines[key] = kline
    return out


def _construct_seq(loader, node):
    out = Seq(loader.construct_object(child, deep=True) for child in node.value)
    out.line = node.start_mark.line + 1
    out.lines = [child.start_mark.line + 1 for child in node.value]
    return out


# Only true/false are yes/no values (as in YAML 1.2): ids such as NO or ON stay text.
Loader.yaml_implicit_resolvers = {
    first: [(tag, rx) for tag, rx in resolvers if tag != "tag:yaml.org,2002:bool"]
    for first, resolvers in _BaseLoader.yaml_implicit_resolvers.items()
}
Loader.add_implicit_resolver(
    "tag:yaml.org,2002:bool", re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$"), list("tTfF")
)
Loader.add_constructor("tag:yaml.org,2002:map", _construct_map)
Loader.add_constructor("tag:yaml.org,2002:seq", _construct_seq)


def line_of(container, key, default=1):
    if isinstance(container, Map):
        return container.lines.get(key, container.line)
    if isinstance(container, Seq):
        if isinstance(key, int) and 0 <= key < len(container.lines):
            return container.lines[key]
        return container.line
    return default


# --------------------------------------------------------------------------------------------
# Problem collection and field readers
# --------------------------------------------------------------------------------------------
class Checker:
    def __init__(self, source):
        self.source = source
        self.problems = []

    def add(self, line, item, text):
        self.problems.append(f"{self.source}:{line}: {item}: {text}")

    def raise_if_any(self):
        if self.problems:
            # stable sort by line, so the list reads top to bottom like the file
            self.problems.sort(key=lambda text: int(text[len(self.source) + 1:].split(":")[0]))
            shown = self.problems[:MAX_PROBLEMS]
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
            self.add(m.lines[key], item, unknown(f"unknown key '{key}'", key, valid))
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
        """Read a number; report and return ``BAD`` when it is wrong."""
        line = line_of(m, key)
        if key not in m or m[key] is None:
            if required:
                self.add(line, item, f"'{key}' is missing")
                return BAD
            return default
        raw = m[key]
        value = _as_number(raw)
        if value is None:
            self.add(line, item, f"{key} must be a number, got {show(raw)}")
            return BAD
        if integer:
            if not float(value).is_integer():
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
        raw = m[key]
        return self.id_value(raw, line, item, key)

    def id_value(self, raw, line, item, what):
        if isinstance(raw, bool):
            self.add(line, item, f"{what} must be text, got the yes/no value {raw!r} "
                     "(quote it)")
            return None
        if isinstance(raw, int):
            return str(raw)
        if isinstance(raw, str) and raw.strip():
            return raw
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
                self.add(line, item, unknown(f"site '{sid}' is not defined", sid, site_ids))
                return None
            ends.append(sid)
        if ends[0] == ends[1]:
            self.add(line, item, f"{key} names the same site '{ends[0]}' twice")
            return None
        return tuple(ends)


def _as_number(raw):
    if isinstance(raw, bool):
        return None
    if isinstance(raw, (int, float)):
        value = raw
    elif isinstance(raw, str):
        # PyYAML reads '1e5' (no dot) as text; accept any plain decimal notation
        try:
            value = float(raw.strip())
        except ValueError:
            return None
    else:
        return None
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def show(raw) -> str:
    if isinstance(raw, str):
        return repr(raw)
    if isinstance(raw, (list, dict)):
        return f"a {kind(raw)}"
    return repr(raw)


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
        return f"text {raw!r}"
    return f"{type(raw).__name__} {raw!r}"


def unknown(what, name, valid) -> str:
    close = difflib.get_close_matches(str(name), [str(v) for v in valid], n=1, cutoff=0.6)
    if close:
        return f"{what} (did you mean '{close[0]}'?)"
    names = sorted(map(str, valid)) if isinstance(valid, (set, dict)) else list(map(str, valid))
    if 0 < len(names) <= 12:
        return f"{what} (valid: {', '.join(names)})"
    return what

"""YAML with line numbers, read as a stream of parser events.

Private to :mod:`netdim.netfile`. The document is built from PyYAML's event stream (libyaml's
parser when PyYAML has it) into :class:`Map` and :class:`Seq`, which remember the line of
every key and item. Building from events rather than from PyYAML's node tree keeps only the
result in memory (a node tree holds two position marks per scalar), and lets every limit be
checked while reading:

- nesting deeper than :data:`MAX_DEPTH` levels;
- aliases and merge keys that expand to more than :data:`MAX_EXPANSION` times the items
  written (an "alias bomb");
- tags other than the plain YAML ones (``!!binary``, ``!!set``, ``!!python/...``).

Only ``true``/``false`` are yes/no values and dates stay text (as in YAML 1.2), so ids such as
``NO`` or ``2026-02-30`` are read as written. A whole number or a decimal that Python cannot
hold (more than :data:`MAX_DIGITS` digits) becomes a :class:`BadNumber`, which the field
readers report with the field it is in.
"""

from __future__ import annotations

import re

import yaml

__all__ = ["Map", "Seq", "BadNumber", "YamlProblem", "load", "line_of", "MAX_DEPTH",
           "MAX_EXPANSION", "MAX_DIGITS"]

#: Deepest nesting of lists and mappings (a network file needs 6 levels).
MAX_DEPTH = 40
#: Most items aliases and merge keys may expand to, as a multiple of the items written.
MAX_EXPANSION = 10
#: Longest number read (longer ones are reported as unreadable, not converted).
MAX_DIGITS = 100


class Map(dict):
    """A mapping that remembers its line and the line of each key (1-based).

    ``lines`` maps keys to lines; it is None while every key is on the mapping's own line
    (a one-line flow mapping), which saves a dict per entry of a large file. Read lines with
    :func:`line_of`.
    """

    __slots__ = ("line", "lines")

    def __init__(self, line=1):
        super().__init__()
        self.line = line
        self.lines = None


class Seq(list):
    """A sequence that remembers its line and the line of each item (1-based); ``lines`` is
    None while every item is on the sequence's own line (see :class:`Map`)."""

    __slots__ = ("line", "lines")

    def __init__(self, line=1):
        super().__init__()
        self.line = line
        self.lines = None


class BadNumber(str):
    """A scalar that looks like a number but cannot be one (too many digits, an unknown
    notation); ``why`` says what is wrong with it."""

    __slots__ = ("why",)

    def __new__(cls, text, why):
        obj = super().__new__(cls, text)
        obj.why = why
        return obj


class YamlProblem(Exception):
    """The text is not YAML netdim reads; ``line`` (1-based) and ``what``."""

    def __init__(self, line, what):
        super().__init__(what)
        self.line = line
        self.what = what


_Parser = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


class _Resolver(yaml.resolver.Resolver):
    """YAML 1.1's implicit types less yes/no words, dates and merge-free bools."""


_Resolver.yaml_implicit_resolvers = {
    first: [(tag, rx) for tag, rx in resolvers
            if tag not in ("tag:yaml.org,2002:bool", "tag:yaml.org,2002:timestamp")]
    for first, resolvers in yaml.resolver.Resolver.yaml_implicit_resolvers.items()
}
_Resolver.add_implicit_resolver(
    "tag:yaml.org,2002:bool", re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$"), list("tTfF")
)
_RESOLVER = _Resolver()
_TAG = "tag:yaml.org,2002:"
_PLAIN_TAGS = {_TAG + t for t in ("str", "int", "float", "bool", "null", "map", "seq")}
_CONSTRUCTOR = yaml.constructor.SafeConstructor()


def _scalar(event):
    tag = event.tag
    value = event.value
    if tag is None or tag == "!":
        if event.implicit[0]:
            tag = _RESOLVER.resolve(yaml.ScalarNode, value, (True, False))
        else:
            return value  # quoted: text
    if tag == _TAG + "str":
        return value
    if tag == _TAG + "int":
        return _int(value)
    if tag == _TAG + "float":
        return _float(value)
    if tag == _TAG + "null":
        return None
    if tag == _TAG + "bool":
        return value.lower() == "true"
    if tag == _TAG + "merge":
        return _MERGE
    raise YamlProblem(event.start_mark.line + 1,
                      f"tag {_short(tag)} is not used in network files (plain YAML only)")


def _short(tag):
    return "!!" + tag[len(_TAG):] if tag.startswith(_TAG) else tag


def _int(text):
    if len(text) > MAX_DIGITS:
        digits = sum(c.isdigit() for c in text)
        if digits > MAX_DIGITS:
            return BadNumber(text, f"a number of {digits} digits")
    try:
        if text.isdigit() and (len(text) == 1 or text[0] != "0"):
            return int(text)
        return _CONSTRUCTOR.construct_yaml_int(yaml.ScalarNode(_TAG + "int", text))
    except ValueError:
        return BadNumber(text, f"{text!r}, which is not a number")


def _float(text):
    if len(text) > MAX_DIGITS:
        digits = sum(c.isdigit() for c in text)
        if digits > MAX_DIGITS:
            return BadNumber(text, f"a number of {digits} digits")
    try:
        return float(text)  # plain decimal notation (what the resolver matched, mostly)
    except ValueError:
        pass
    try:
        return _CONSTRUCTOR.construct_yaml_float(yaml.ScalarNode(_TAG + "float", text))
    except ValueError:
        return BadNumber(text, f"{text!r}, which is not a number")


class _Merge:
    """The ``<<`` merge key."""

    def __repr__(self):
        return "'<<'"


_MERGE = _Merge()


class _Frame:
    __slots__ = ("obj", "key", "key_line", "merges", "size", "anchor", "is_map")

    def __init__(self, obj, anchor, is_map):
        self.obj = obj
        self.anchor = anchor
        self.is_map = is_map
        self.key = _NOKEY
        self.key_line = 0
        self.merges = []
        self.size = 1


_NOKEY = object()
_UNHASHABLE = object()


def load(text: str):
    """Read one YAML document into :class:`Map` / :class:`Seq` / scalars.

    Returns
    -------
    (data, key_problems)
        ``data`` is None for an empty document; ``key_problems`` lists ``(line, text)`` for
        duplicate and unusable keys (the rest of the document is still read).

    Raises
    ------
    YamlProblem
        The text is not YAML, has more than one document, or breaks a limit above.
    """
    parser = _Parser(text)
    get_event = parser.get_event
    problems = []
    anchors = {}  # anchor -> (object, expanded size)
    stack = []
    written = 0  # items as written (aliases count 1)
    root = None
    docs = 0
    cache = {}  # plain scalar text -> value: ids and keys repeat thousands of times
    Scalar, Alias = yaml.ScalarEvent, yaml.AliasEvent
    MapStart, SeqStart = yaml.MappingStartEvent, yaml.SequenceStartEvent
    ends = (yaml.MappingEndEvent, yaml.SequenceEndEvent)
    try:
        while True:
            event = get_event()
            cls = type(event)
            if cls is Scalar:
                written += 1
                size = 1
                if event.tag is None and event.implicit[0] and event.anchor is None:
                    value = cache.get(event.value, _NOKEY)
                    if value is _NOKEY:
                        value = _scalar(event)
                        if len(cache) > 100_000:
                            cache.clear()
                        cache[event.value] = value
                else:
                    value = _scalar(event)
                    if event.anchor is not None:
                        anchors[event.anchor] = (value, 1)
                line = event.start_mark.line + 1
            elif cls in ends:
                frame = stack.pop()
                value, size, line = frame.obj, frame.size, frame.obj.line
                if frame.merges:
                    size += _merge(frame, problems)
                if frame.anchor is not None:
                    anchors[frame.anchor] = (value, size)
                if size > MAX_EXPANSION * written + 10_000:
                    raise YamlProblem(line, f"aliases expand to more than {MAX_EXPANSION} "
                                      "times the items written (a file that grows as it is "
                                      "read)")
            elif cls is MapStart or cls is SeqStart:
                written += 1
                line = event.start_mark.line + 1
                if event.tag is not None and event.tag != "!" and event.tag not in _PLAIN_TAGS:
                    raise YamlProblem(line, f"tag {_short(event.tag)} is not used in network "
                                            "files (plain YAML only)")
                if len(stack) >= MAX_DEPTH:
                    raise YamlProblem(line, f"nested more than {MAX_DEPTH} levels deep")
                is_map = cls is MapStart
                stack.append(_Frame(Map(line) if is_map else Seq(line), event.anchor, is_map))
                continue
            elif cls is Alias:
                written += 1
                line = event.start_mark.line + 1
                if event.anchor not in anchors:
                    raise YamlProblem(line, f"found undefined alias '{event.anchor}'")
                value, size = anchors[event.anchor]
            elif cls is yaml.DocumentStartEvent:
                docs += 1
                if docs > 1:
                    raise YamlProblem(event.start_mark.line + 1, "but found another document "
                                      "(expected a single document in the stream)")
                continue
            elif cls is yaml.StreamEndEvent:
                break
            else:  # stream start, document end
                continue
            if not stack:
                root = value
                continue
            frame = stack[-1]
            frame.size += size
            obj = frame.obj
            if frame.is_map:
                _add_to_map(frame, obj, value, line, problems)
            else:
                obj.append(value)
                if obj.lines is not None:
                    obj.lines.append(line)
                elif line != obj.line:
                    obj.lines = [obj.line] * (len(obj) - 1) + [line]
    except yaml.reader.ReaderError as exc:
        char = exc.character if isinstance(exc.character, int) else ord(exc.character)
        line = text.count("\n", 0, exc.position) + 1
        raise YamlProblem(line, f"unacceptable character #x{char:04x}: {exc.reason}") from None
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        what = " ".join(str(exc.problem or exc).split())
        if exc.context:
            what = f"{what} ({' '.join(str(exc.context).split())})"
        raise YamlProblem(mark.line + 1 if mark is not None else 1, what) from None
    except yaml.YAMLError as exc:
        raise YamlProblem(1, " ".join(str(exc).split())) from None
    finally:
        parser.dispose()
    return root, problems


def _add_to_map(frame, obj, value, line, problems):
    if frame.key is _NOKEY:  # a key
        if isinstance(value, (Map, Seq)):
            problems.append((line, "a key must be plain text"))
            frame.key = _UNHASHABLE
        else:
            frame.key = value
        frame.key_line = line
        return
    key, frame.key = frame.key, _NOKEY
    if key is _UNHASHABLE:
        return
    if key is _MERGE:
        frame.merges.append((value, frame.key_line))
        return
    if key in obj:
        problems.append((frame.key_line,
                         f"duplicate key '{key}' (first on line {line_of(obj, key)})"))
        return
    obj[key] = value
    _note_line(obj, key, frame.key_line)


def _note_line(obj, key, line):
    if obj.lines is not None:
        obj.lines[key] = line
    elif line != obj.line:
        obj.lines = dict.fromkeys(obj, obj.line)
        obj.lines[key] = line


def _merge(frame, problems):
    """Apply ``<<`` merge keys: keys written in the mapping win, then earlier sources."""
    obj = frame.obj
    added = 0
    for value, line in frame.merges:
        sources = value if isinstance(value, Seq) else [value]
        for src in sources:
            if not isinstance(src, Map):
                problems.append((line, "a merge key '<<' must name a mapping or a list of "
                                       "mappings"))
                continue
            for key, item in src.items():
                if key not in obj:
                    obj[key] = item
                    _note_line(obj, key, line)
                    added += 1
    return added


def line_of(container, key, default=1):
    """The line of ``key`` in a :class:`Map` (or index in a :class:`Seq`), else of the
    container itself."""
    if isinstance(container, Map):
        lines = container.lines
        return container.line if lines is None else lines.get(key, container.line)
    if isinstance(container, Seq):
        lines = container.lines
        if lines is not None and isinstance(key, int) and 0 <= key < len(lines):
            return lines[key]
        return container.line
    return default

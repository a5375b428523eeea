"""Writing a sized network back into the text it was read from.

Private to :mod:`netdim.netfile`. A plan file is the input file with only the capacities
changed, so that ``git diff`` shows the plan and nothing else: comments, field order, flow or
block style, ``rate``/``holding``, defaults and routes stay as written. Each link's
``capacity`` value is found by its position in the text (from the YAML parser's events) and
replaced; a link that had no capacity gets one after its ``ends``, marked with a comment.
The result is read back before it is written, and must give the network with the plan's
capacities, else nothing is written.

Patching the text was chosen over a round-trip YAML library after measuring both
(docs/measurements/netfile.md): it changes nothing but the numbers, on flow-style mappings
too, and is faster.
"""

from __future__ import annotations

import os

import yaml

from netdim.errors import NetworkFileError
from netdim.netfile._read import loads_network, read_network_text
from netdim.netfile._write import check_capacities, dumps_network, write_atomic
from netdim.netfile._yaml import _Parser

__all__ = ["dumps_plan", "write_plan", "check_plan_path", "ADDED"]

#: The comment that marks a capacity the plan added.
ADDED = "# capacity added by netdim size"


def check_plan_path(source, path, force=False) -> None:
    """Refuse to write a plan over the file it was read from, unless ``force``.

    Raises
    ------
    ValueError
        ``path`` is the same file as ``source``.
    """
    if force or not source:
        return
    try:
        same = os.path.samefile(source, path)
    except OSError:
        return  # one of them does not exist: nothing to lose
    if same:
        raise ValueError(f"{path}: is the input file; the plan would replace it (write the "
                         "plan to another file, or add --force to replace it)")


def write_plan(network, path, capacities, *, text=None, force=False) -> None:
    """Write ``network`` with ``capacities`` as a network file, whole or not at all.

    Parameters
    ----------
    network : Network
        As read; its ``source`` file (or ``text``) is the text written back.
    path : str or path-like
    capacities : array_like of int
        One per link, in link order.
    text : str, optional
        The text ``network`` was read from (default: read ``network.source`` again). A
        network with neither (built in Python) is written fresh by
        :func:`~netdim.netfile.write_network`.
    force : bool
        Allow ``path`` to be the input file itself.

    Raises
    ------
    ValueError
        ``path`` is the input file and not ``force``; wrong capacities; the text no longer
        reads as ``network`` (the file changed since it was read).
    OSError
        The file cannot be written; an existing file is left as it was.

    Examples
    --------
    The plan keeps the input's text, comments and layout; only the capacity changes.

    >>> import pathlib, tempfile
    >>> from netdim.netfile import read_network
    >>> text = '''name: Two hamlets
    ... sites: [{id: ALD}, {id: BIR}]
    ... links: [{id: ALD-BIR, ends: [ALD, BIR], capacity: 10}]   # the busy-hour group
    ... demands: [{between: [ALD, BIR], traffic: 5.0, target: 0.02}]
    ... '''
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     source = pathlib.Path(tmp, "hamlets.yaml")
    ...     _ = source.write_text(text, encoding="utf-8")
    ...     net = read_network(source)
    ...     write_plan(net, pathlib.Path(tmp, "plan.yaml"), [12])
    ...     plan = pathlib.Path(tmp, "plan.yaml").read_text(encoding="utf-8")
    ...     try:
    ...         write_plan(net, source, [12])
    ...     except ValueError as exc:
    ...         refused = str(exc)
    >>> print(plan.splitlines()[2])
    links: [{id: ALD-BIR, ends: [ALD, BIR], capacity: 12}]   # the busy-hour group
    >>> plan == text.replace("capacity: 10", "capacity: 12")
    True
    >>> "hamlets.yaml: is the input file" in refused  # over the input only with force=True
    True
    """
    check_plan_path(network.source, path, force)
    if text is None and network.source and os.path.isfile(network.source):
        try:
            text = read_network_text(network.source, max_size=0)
        except NetworkFileError as exc:
            raise ValueError(str(exc)) from None
    if text is None:
        out = dumps_network(network, capacities)
    else:
        out = dumps_plan(text, network, capacities)
    write_atomic(path, out)


def dumps_plan(text: str, network, capacities) -> str:
    """``text`` with the capacity of every link set to ``capacities``.

    Parameters
    ----------
    text : str
        The network file ``network`` was read from.
    network : Network
    capacities : array_like of int

    Returns
    -------
    str
        The same text but for the capacity values (and, for links that had none, an added
        ``capacity:`` marked with :data:`ADDED`).

    Raises
    ------
    ValueError
        Wrong capacities, or the text does not read back to the network with them.
    """
    caps = check_capacities(network, capacities)
    places = _link_places(text)
    if len(places) != len(network.links):
        raise ValueError(f"{_name(network)}: the text has {len(places)} links, the network "
                         f"{len(network.links)} (was the file changed since it was read?)")
    edits = []  # (start, end, new text)
    for link, cap, place in zip(network.links, caps, places, strict=True):
        cap = int(cap)
        if place.value is not None:
            start, end = place.value
            if link.capacity != cap:
                edits.append((start, end, str(cap) if end > start else f" {cap}"))
        else:
            edits.extend(_insertions(text, place, cap))
    out = []
    pos = 0
    for start, end, new in sorted(edits):
        out.append(text[pos:start])
        out.append(new)
        pos = end
    out.append(text[pos:])
    result = "".join(out)
    expected = network.with_capacities(caps)
    try:
        back = loads_network(result, source=network.source or "<plan>")
    except NetworkFileError as exc:
        raise ValueError(f"{_name(network)}: the plan's text does not read back "
                         f"({exc.problems[0]})") from None
    if back != expected or back.extra != network.extra:
        raise ValueError(f"{_name(network)}: the text does not read back to the network "
                         "with the plan's capacities (was the file changed since it was "
                         "read?)")
    return result


def _name(network):
    return network.source or f"network '{network.name}'"


class _Place:
    """Where one link's fields are in the text."""

    __slots__ = ("value", "ends_end", "flow", "column", "end")

    def __init__(self, flow, column):
        self.value = None  # (start, end) of the capacity value
        self.ends_end = None  # index just after the ends value
        self.flow = flow
        self.column = column  # of the mapping's first key (block style)
        self.end = None  # index of the mapping's end


def _link_places(text):
    """A :class:`_Place` per entry of the top-level ``links`` list, in order."""
    parser = _Parser(text)
    places = []
    try:
        depth = 0
        top_key = None  # at depth 1: the key whose value comes next, or None
        expect_key = True
        in_links = False
        place = None
        link_key = None
        link_expect_key = True
        last_end = None
        while parser.check_event():
            ev = parser.get_event()
            cls = type(ev)
            start = cls in (yaml.MappingStartEvent, yaml.SequenceStartEvent)
            end = cls in (yaml.MappingEndEvent, yaml.SequenceEndEvent)
            node = cls in (yaml.ScalarEvent, yaml.AliasEvent) or start
            if depth == 1 and node:
                if expect_key:
                    top_key = ev.value if cls is yaml.ScalarEvent else None
                    expect_key = False
                    continue
                expect_key = True
                in_links = top_key == "links" and cls is yaml.SequenceStartEvent
            elif in_links and depth == 2 and cls is yaml.MappingStartEvent:
                place = _Place(bool(ev.flow_style), ev.start_mark.column)
                places.append(place)
                link_expect_key = True
            elif in_links and depth == 2 and node:
                places.append(_Place(True, 0))  # not a mapping: cannot be patched
            elif place is not None and depth == 3 and node:
                if link_expect_key:
                    link_key = ev.value if cls is yaml.ScalarEvent else None
                    link_expect_key = False
                else:
                    link_expect_key = True
                    if link_key == "capacity" and not start:
                        place.value = (ev.start_mark.index, ev.end_mark.index)
                    elif link_key == "ends" and not start:
                        place.ends_end = ev.end_mark.index
                    elif link_key == "ends":
                        last_end = "ends"
            if (place is not None and depth == 4 and last_end == "ends"
                    and cls in (yaml.ScalarEvent, yaml.AliasEvent)):
                place.ends_end = ev.end_mark.index  # the last item of the ends list so far
            if start:
                depth += 1
            elif end:
                depth -= 1
                if place is not None and depth == 3 and last_end == "ends":
                    if ev.end_mark.index > ev.start_mark.index:  # a flow list's ']'
                        place.ends_end = ev.end_mark.index
                    last_end = None
                elif place is not None and depth == 2:
                    place.end = ev.start_mark.index
                    place = None
                elif depth == 1:
                    in_links = False
    finally:
        parser.dispose()
    return places


def _insertions(text, place, cap):
    """Edits ``(start, end, text)`` adding ``capacity: cap`` to a link that has none."""
    if place.ends_end is None or place.end is None:
        raise ValueError("a link without capacity has no 'ends' to put the capacity after")
    at = place.ends_end
    if place.flow:
        edits = [(at, at, f", capacity: {cap}")]
        # the mark goes at the end of the line when nothing follows the mapping there
        eol = text.find("\n", place.end)
        eol = len(text) if eol < 0 else eol - (text[eol - 1] == "\r")
        if text[place.end + 1:eol].strip() == "":
            edits.append((eol, eol, f"  {ADDED}"))
        return edits
    eol = text.find("\n", at)
    eol = len(text) if eol < 0 else eol - (text[eol - 1] == "\r")
    return [(eol, eol, "\n" + " " * place.column + f"capacity: {cap}  {ADDED}")]

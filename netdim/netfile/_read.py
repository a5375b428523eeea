"""Reading a network file: the file checks, the text, and the sections in order.

Private to :mod:`netdim.netfile` (whose docstring describes the format and the limits).
"""

from __future__ import annotations

import os
import pathlib
import stat
from dataclasses import replace

from netdim.errors import NetworkFileError
from netdim.model import Network
from netdim.netfile._day import parse_day
from netdim.netfile._fields import FieldReader, kind
from netdim.netfile._sections import (
    MAX_TRAFFIC,
    parse_defaults,
    parse_demands,
    parse_links,
    parse_routing,
    parse_sites,
)
from netdim.netfile._write import plain_data
from netdim.netfile._yaml import Map, Seq, YamlProblem, load

__all__ = ["read_network", "read_network_text", "loads_network", "MAX_FILE_SIZE"]

#: Largest network file read, in bytes (``max_size`` / ``--max-file-size`` to change).
MAX_FILE_SIZE = 32 * 2**20

TOP_KEYS = ("name", "sites", "links", "demands", "defaults", "routing", "description", "notes")
_KEPT_TOP = ("description", "notes")
_NO_LINKS = ""  # in the unreadable set when the links section itself is unusable


def read_network(path, *, max_size=None) -> Network:
    """Read and check a network file.

    Parameters
    ----------
    path : str or path-like
    max_size : int, optional
        Largest file accepted, in bytes (default :data:`MAX_FILE_SIZE`; 0 for no limit).

    Returns
    -------
    Network
        With ``source`` set to ``str(path)``, and routes resolved to link indices.

    Raises
    ------
    NetworkFileError
        The file cannot be read (one line, ``FILE: cannot read: reason``) or is not a valid
        network file (one line per problem, ``FILE:LINE: ITEM: problem``).

    Examples
    --------
    A one-link network written to a file in a temporary directory and read back; the
    name comes from the file's stem when the file gives none.

    >>> import pathlib, tempfile
    >>> text = '''
    ... sites: [{id: ALD}, {id: BIR}]
    ... links: [{id: ALD-BIR, ends: [ALD, BIR], capacity: 10}]
    ... demands: [{between: [ALD, BIR], traffic: 5.0, target: 0.02}]
    ... '''
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     path = pathlib.Path(tmp, "two-hamlets.yaml")
    ...     _ = path.write_text(text, encoding="utf-8")
    ...     net = read_network(path)
    >>> net.name, [link.capacity for link in net.links], [d.id for d in net.demands]
    ('two-hamlets', [10], ['ALD-BIR'])
    >>> read_network("no-such-file.yaml")
    Traceback (most recent call last):
    ...
    netdim.errors.NetworkFileError: no-such-file.yaml: cannot read: No such file or directory
    """
    text = read_network_text(path, max_size=max_size)
    return loads_network(text, source=str(path), default_name=pathlib.Path(path).stem)


def read_network_text(path, *, max_size=None) -> str:
    """The text of a network file, after the checks :func:`read_network` makes.

    Only a regular file no larger than ``max_size`` bytes is read (a FIFO, a device or a
    directory is refused without waiting on it); the text is UTF-8, or UTF-16/32 with a
    byte-order mark; a UTF-8 byte-order mark is dropped.

    Raises
    ------
    NetworkFileError
        ``FILE: cannot read: reason`` (one line).
    """
    source = str(path)
    limit = MAX_FILE_SIZE if max_size is None else int(max_size)

    def refuse(reason):
        return NetworkFileError(f"{source}: cannot read: {reason}")

    try:
        # O_NONBLOCK: opening a FIFO must not wait for a writer (it is refused just below)
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except OSError as exc:
        raise refuse(exc.strerror or str(exc)) from None
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            what = ("a directory" if stat.S_ISDIR(info.st_mode) else
                    "a named pipe (FIFO)" if stat.S_ISFIFO(info.st_mode) else
                    "a device" if stat.S_ISCHR(info.st_mode) or stat.S_ISBLK(info.st_mode)
                    else "a socket" if stat.S_ISSOCK(info.st_mode) else "not a regular file")
            raise refuse(f"is {what}, not a regular file")
        if limit and info.st_size > limit:
            raise refuse(f"the file has {_mb(info.st_size)}, more than the limit of "
                         f"{_mb(limit)} (--max-file-size to raise it)")
        with os.fdopen(fd, "rb", closefd=True) as fh:
            fd = None
            data = fh.read(limit + 1) if limit else fh.read()
    except OSError as exc:
        raise refuse(exc.strerror or str(exc)) from None
    finally:
        if fd is not None:
            os.close(fd)
    if limit and len(data) > limit:
        raise refuse(f"the file grew past the limit of {_mb(limit)} while it was read")
    return _decode(data, source)


def _mb(n):
    return f"{n / 2**20:.1f} MiB" if n >= 2**20 else f"{n} bytes"


def _decode(data: bytes, source: str) -> str:
    boms = ((b"\xef\xbb\xbf", "utf-8"), (b"\xff\xfe\x00\x00", "utf-32-le"),
            (b"\x00\x00\xfe\xff", "utf-32-be"), (b"\xff\xfe", "utf-16-le"),
            (b"\xfe\xff", "utf-16-be"))
    encoding = "utf-8"
    for bom, name in boms:
        if data.startswith(bom):
            data, encoding = data[len(bom):], name
            break
    try:
        text = data.decode(encoding)
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1 if encoding == "utf-8" else 1
        raise NetworkFileError(f"{source}:{line}: file: is not {encoding.upper()} text "
                               f"(byte {data[exc.start]:#04x}; save the file as UTF-8)"
                               ) from None
    nul = text.find("\0")
    if nul >= 0:
        line = text.count("\n", 0, nul) + 1
        raise NetworkFileError(f"{source}:{line}: file: holds a NUL character (a binary "
                               "file, not a YAML network file)")
    return text


def loads_network(text: str, source: str = "<string>", default_name: str = "network") -> Network:
    """Read a network from YAML text; see :func:`read_network`.

    Parameters
    ----------
    text : str
        The YAML document.
    source : str
        Name used in messages and kept as ``Network.source``.
    default_name : str
        Network name when the file gives none.

    Raises
    ------
    NetworkFileError
        One line per problem, ``SOURCE:LINE: ITEM: problem``.

    Examples
    --------
    One trunk group of 10 circuits offered 5 E, its one route found by the reader. Its
    blocking by the fixed point is Erlang B's E(5, 10) = 0.0183846 (the sum
    ``5**10/10! / sum(5**k/k!, k <= 10)``, checked with mpmath).

    >>> from netdim import evaluate
    >>> text = '''
    ... name: Two hamlets
    ... sites: [{id: ALD}, {id: BIR}]
    ... links: [{id: ALD-BIR, ends: [ALD, BIR], capacity: 10}]
    ... demands: [{between: [ALD, BIR], traffic: 5.0, target: 0.02}]
    ... '''
    >>> net = loads_network(text)
    >>> net.name, net.source, net.demands[0].routes[0].links
    ('Two hamlets', '<string>', (0,))
    >>> round(float(evaluate(net).blocking[0]), 7)
    0.0183846
    >>> loads_network(text.replace("capacity: 10", "capacity: -1"))
    Traceback (most recent call last):
    ...
    netdim.errors.NetworkFileError: <string>:4: link 'ALD-BIR': capacity must be >= 0, got -1
    """
    reader = FieldReader(source)
    try:
        data, key_problems = load(text)
    except YamlProblem as exc:
        raise NetworkFileError(f"{source}:{exc.line}: YAML: {exc.what}") from None
    for line, what in key_problems:
        reader.add(line, "YAML", what)
    if data is None:
        reader.add(1, "file", "is empty (expected a mapping with sites, links and demands)")
        reader.raise_if_any()
    if not isinstance(data, Map):
        reader.add(1, "file", f"must be a mapping with sites, links and demands, got "
                              f"{kind(data)}")
        reader.raise_if_any()
    net = _build(reader, data, default_name)
    reader.raise_if_any()
    return replace(net, source=source)


def _build(reader, data, default_name):
    reader.keys(data, TOP_KEYS, "file", keep="x-")
    name = reader.text(data, "name", "name", default=default_name)
    defaults = parse_defaults(reader, data)
    routing = parse_routing(reader, data)
    sites = parse_sites(reader, data)
    # without a usable sites section, site names cannot be checked: say so once only
    site_ids = {s.id for s in sites} if isinstance(data.get("sites"), Seq) else None
    links, unreadable = parse_links(reader, data, site_ids, defaults)
    if not isinstance(data.get("links"), Seq):
        unreadable.add(_NO_LINKS)  # reported once, not again as "no route" per demand
    demands = parse_demands(reader, data, site_ids, links, unreadable, defaults, routing)
    demands, day = parse_day(reader, data, demands, MAX_TRAFFIC, links)
    extra = {k: v for k, v in data.items()
             if k in _KEPT_TOP or (isinstance(k, str) and k.startswith("x-"))}
    return Network(
        name=name,
        sites=tuple(sites),
        links=tuple(links),
        demands=tuple(demands),
        routing=routing,
        default_target=defaults["target"],
        default_holding=defaults["holding"],
        extra=plain_data(extra),
        day=day,
    )

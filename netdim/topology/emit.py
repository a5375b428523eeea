"""Network-file text that reads like the bundled files, and writing it safely.

One item per line in YAML flow style (``- {id: A, ends: [A, B], ...}``), wrapped between
entries at :data:`WIDTH` characters, a comment after an item where the import guessed
something about it, and a header comment saying where the file came from.
"""

from __future__ import annotations

import errno
import os
import pathlib
import tempfile
import textwrap

import yaml

__all__ = ["WIDTH", "scalar", "flow_item", "flow_mapping_line", "comment_block", "write_text"]

#: Longest line written (the project's line length).
WIDTH = 100

_SEP = "\0"  # a place between flow entries where a line may break


def scalar(value) -> str:
    """``value`` as YAML text fit for a flow collection (quoted where it must be).

    PyYAML's emitter decides the quoting: a one-item flow list is dumped and its brackets
    taken off, so text with commas, colons, brackets, ``#`` or a look of a number or a
    yes/no value comes out quoted and reads back as the same text.
    """
    if isinstance(value, bool) or value is None:
        raise TypeError(f"scalar: unsupported value {value!r}")
    if isinstance(value, int):
        return str(value)
    text = yaml.safe_dump([value], default_flow_style=True, allow_unicode=True,
                          width=float("inf"))
    return text.strip()[1:-1]


def _flow(value) -> str:
    if isinstance(value, dict):
        return "{" + _SEP.join(f"{scalar(k)}: {_flow(v)}" for k, v in value.items()) + "}"
    if isinstance(value, (list, tuple)):
        return "[" + _SEP.join(_flow(v) for v in value) + "]"
    return scalar(value)


def flow_item(mapping: dict, indent: str = "  ", comment: str | None = None) -> str:
    """One ``- {...}`` sequence item, wrapped between entries, with an optional comment.

    Continuation lines are indented past the item's brace, as in the bundled files; a
    comment that does not fit after the item goes on a line above it.
    """
    pieces = _flow(mapping).split(_SEP)
    first = f"{indent}- "
    cont = " " * (len(first) + 1)
    lines, current = [], first + pieces[0]
    for piece in pieces[1:]:
        if len(current) + 2 + len(piece) + 1 > WIDTH:  # room for the comma of a break
            lines.append(current + ",")
            current = cont + piece
        else:
            current += ", " + piece
    if comment:
        tail = f"   # {comment}"
        if len(current) + len(tail) <= WIDTH:
            current += tail
        else:  # on a line of its own, above the item
            lines.insert(0, f"{indent}# {comment}")
    lines.append(current)
    return "\n".join(lines)


def flow_mapping_line(key: str, mapping: dict) -> str:
    """A top-level ``key: {...}`` line (defaults, routing)."""
    return f"{key}: " + _flow(mapping).replace(_SEP, ", ")


def comment_block(paragraphs) -> str:
    """``# ``-comment lines, each paragraph wrapped to :data:`WIDTH` (hanging indent)."""
    out = []
    for text in paragraphs:
        text = " ".join(str(text).split())
        out.extend(textwrap.wrap(text, width=WIDTH, initial_indent="# ",
                                 subsequent_indent="#   ", break_on_hyphens=False,
                                 break_long_words=False))
    return "\n".join(out)


def write_text(text: str, path, force: bool = False, mode: int = 0o644) -> None:
    """Write ``text`` to ``path`` whole or not at all; never replace a file unless ``force``.

    Parameters
    ----------
    text : str
    path : str or path-like
    force : bool
        Replace an existing file.
    mode : int
        Permissions of the new file (default 0644: the owner writes, everyone reads).

    Raises
    ------
    FileExistsError
        ``path`` exists and ``force`` is false (the file is left as it was).
    OSError
        The file cannot be written (named in the error); an existing file is left as it was.

    Notes
    -----
    The text goes to a temporary file in the same directory and is flushed to disk; it then
    takes the name in one step: :func:`os.link`, which fails rather than replace an existing
    file, or :func:`os.replace` under ``force``. Readers see the old file or the new one,
    never a part of one.
    """
    target = pathlib.Path(path)
    if not force and target.exists():
        raise FileExistsError(errno.EEXIST, "already exists (not replaced)", str(path))
    directory = target.parent if str(target.parent) else pathlib.Path(".")
    tmp_name = None
    try:
        fd, tmp_name = tempfile.mkstemp(dir=directory, prefix=f".{target.name}.", suffix=".tmp")
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp_name, mode)
        if force:
            os.replace(tmp_name, target)
            tmp_name = None
        else:
            try:
                os.link(tmp_name, target)
            except FileExistsError:
                raise
            except OSError:  # a file system without hard links: check, then rename
                if target.exists():
                    raise FileExistsError(errno.EEXIST, "already exists (not replaced)",
                                          str(path)) from None
                os.replace(tmp_name, target)
                tmp_name = None
    except FileExistsError as exc:
        raise FileExistsError(errno.EEXIST, "already exists (not replaced)", str(path)) \
            from exc
    except OSError as exc:
        raise OSError(exc.errno, f"cannot write: {exc.strerror or exc}", str(path)) from None
    finally:
        if tmp_name is not None:
            try:
                os.unlink(tmp_name)
            except OSError:
                pass

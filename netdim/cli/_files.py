"""Options shared by the commands that read a network file.

``add_file_options(parser)`` adds ``--max-file-size``; ``file_limits(args)`` turns it into
the keyword arguments of :func:`netdim.netfile.read_network`.
"""

from __future__ import annotations

import argparse
import re

from netdim.netfile import MAX_FILE_SIZE

__all__ = ["add_file_options", "file_limits", "parse_size"]

_UNITS = {"": 1, "K": 2**10, "M": 2**20, "G": 2**30}


def parse_size(text: str) -> int:
    """Bytes from ``'500000'``, ``'64K'``, ``'32M'``, ``'1G'`` (0: no limit)."""
    m = re.fullmatch(r"\s*(\d+(?:\.\d+)?)\s*([KMG]?)(?:i?B)?\s*", text, flags=re.IGNORECASE)
    if not m:
        raise argparse.ArgumentTypeError(f"expected a size such as 32M, 500K or 0 (no "
                                         f"limit), got {text!r}")
    value = float(m.group(1)) * _UNITS[m.group(2).upper()]
    if value > 2**50:
        raise argparse.ArgumentTypeError(f"size {text!r} is too large")
    return int(value)


def add_file_options(parser) -> None:
    parser.add_argument(
        "--max-file-size", type=parse_size, default=None, metavar="SIZE",
        help=f"refuse network files larger than SIZE (default {MAX_FILE_SIZE // 2**20}M; "
        "0 for no limit)")


def file_limits(args) -> dict:
    size = getattr(args, "max_file_size", None)
    return {} if size is None else {"max_size": size}

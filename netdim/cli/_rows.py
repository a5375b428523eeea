"""How many rows a command prints: the worst few on a large network, every row with --all.

``add_rows_option(parser)`` adds ``--all``; ``rows_shown(args)`` is the row limit to pass
to the text builders (None: every row). CSV and JSON outputs are always whole.
"""

from __future__ import annotations

__all__ = ["NAMES_SHOWN", "ROWS_SHOWN", "add_rows_option", "rows_note", "rows_shown", "some_names"]

#: Rows per table printed without --all; a larger table shows its worst rows.
ROWS_SHOWN = 40


def add_rows_option(parser) -> None:
    parser.add_argument(
        "--all", action="store_true", dest="all_rows",
        help=f"print every row of each table (without it, tables of more than {ROWS_SHOWN} "
        "rows show the worst; --csv and --json always hold every row)")


def rows_shown(args):
    """The row limit for the printed tables (None: all)."""
    return None if getattr(args, "all_rows", False) else ROWS_SHOWN


def rows_note(args, *counts) -> str:
    """A line saying the tables were cut short, or '' when every row was printed."""
    limit = rows_shown(args)
    if limit is None or max(counts, default=0) <= limit:
        return ""
    return (f"(tables cut to their worst {limit} rows; --all prints every row, --csv and "
            "--json hold every row)")


#: Names given on a stderr line of missed (or unclear) items; the rest are counted.
NAMES_SHOWN = 20


def some_names(ids, every="demand") -> str:
    """``ids`` joined by commas, or the first :data:`NAMES_SHOWN` and a count of the rest."""
    ids = list(ids)
    if len(ids) <= NAMES_SHOWN:
        return ", ".join(ids)
    return (", ".join(ids[:NAMES_SHOWN]) + f" and {len(ids) - NAMES_SHOWN} more "
            f"(--csv or --json lists every {every})")

"""CSV files of the small tables of ``netdim erlang`` and ``netdim check``.

The same conventions as the evaluation and plan CSV files: a header row, numbers as the
shortest text that reads back as the same double, no percent signs, each file written
through a temporary file renamed into place (mode 0666 less the umask, 0644 as usual).
"""

from __future__ import annotations

import errno
import os

from netdim.report.evaluation import csv_number, csv_text, write_text_atomic

__all__ = [
    "ERLANG_COLUMNS",
    "ROUTE_COLUMNS",
    "SUMMARY_COLUMNS",
    "csv_cell",
    "erlang_csv",
    "prepare_csv_dir",
    "routes_csv",
    "summary_csv",
    "write_check_csv",
    "write_erlang_csv",
]

#: Columns of erlang.csv (the ``--json`` row keys; ``target`` only when a target is given).
ERLANG_COLUMNS = ("traffic", "servers", "blocking", "target")
#: Columns of summary.csv: ``valid``, then the keys of :meth:`Network.summary`, in order
#: (the ``--csv`` contract: add columns, never rename).
SUMMARY_COLUMNS = (
    "valid", "name", "source", "sites", "links", "demands", "routes", "routes_generated",
    "routes_given", "demands_generated", "longest_route", "offered_traffic", "policy",
    "max_hops", "reservation", "max_routes", "links_without_capacity", "capacity_total",
    "multirate", "holding_overrides", "economic", "longest_route_given",
    "longest_route_generated",
)
#: Columns of routes.csv: one row per step of a route (a demand with no route has one row
#: with ``route``, ``step``, ``link`` and ``holding`` empty).
ROUTE_COLUMNS = ("demand", "site_a", "site_b", "generated", "route", "step", "link", "holding")


def csv_cell(value) -> str:
    """One CSV cell: ``true``/``false``, whole numbers as integers, other numbers as
    :func:`csv_number`, ``None`` empty, a list of ids joined by ``;``."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return csv_number(value)
    if isinstance(value, (list, tuple)):
        return ";".join(str(v) for v in value)
    return str(value)


def erlang_csv(rows) -> str:
    """erlang.csv text: the rows ``netdim erlang --json`` prints, in the same order."""
    header = [c for c in ERLANG_COLUMNS if any(c in r for r in rows)]
    return csv_text(header, [[csv_cell(r[c]) for c in header] for r in rows])


def summary_csv(summary: dict) -> str:
    """summary.csv text: one row, :data:`SUMMARY_COLUMNS` (then any other summary key)."""
    full = {"valid": True, **summary}
    header = [c for c in SUMMARY_COLUMNS if c in full]
    header += [k for k in full if k not in header]
    return csv_text(header, [[csv_cell(full[c]) for c in header]])


def routes_csv(listing) -> str:
    """routes.csv text from :meth:`Network.route_listing`: one row per route step, routes
    numbered from 1 in the order they are tried, steps from 1 along the route."""
    rows = []
    for entry in listing:
        head = [entry["demand"], entry["between"][0], entry["between"][1],
                csv_cell(bool(entry["generated"]))]
        if not entry["routes"]:
            rows.append(head + ["", "", "", ""])
        for k, route in enumerate(entry["routes"], start=1):
            for s, (lid, hold) in enumerate(zip(route["links"], route["holdings"],
                                                strict=True), start=1):
                rows.append(head + [str(k), str(s), lid, csv_number(hold)])
    return csv_text(ROUTE_COLUMNS, rows)


def prepare_csv_dir(directory) -> str:
    """Create ``directory`` if needed; refuse a path that is there but not a directory.

    Raises
    ------
    NotADirectoryError
        ``directory`` is an existing file.
    OSError
        The directory cannot be created.
    """
    if os.path.exists(directory) and not os.path.isdir(directory):
        raise NotADirectoryError(errno.ENOTDIR, "is a file, not a directory for CSV files",
                                 str(directory))
    os.makedirs(directory, exist_ok=True)
    return str(directory)


def write_erlang_csv(rows, directory) -> str:
    """Write ``erlang.csv`` into ``directory`` (created if needed); returns its path.

    Raises
    ------
    OSError
        The directory is a file, or cannot be created or written.
    """
    path = os.path.join(prepare_csv_dir(directory), "erlang.csv")
    write_text_atomic(path, erlang_csv(rows))
    return path


def write_check_csv(summary, directory, listing=None) -> tuple[str, ...]:
    """Write ``summary.csv`` and, given a route listing, ``routes.csv`` into ``directory``
    (created if needed); returns their paths.

    Both texts are built before either file is written.

    Raises
    ------
    OSError
        The directory is a file, or cannot be created or written.
    """
    texts = [("summary.csv", summary_csv(summary))]
    if listing is not None:
        texts.append(("routes.csv", routes_csv(listing)))
    prepare_csv_dir(directory)
    paths = []
    for name, text in texts:
        path = os.path.join(directory, name)
        write_text_atomic(path, text)
        paths.append(path)
    return tuple(paths)

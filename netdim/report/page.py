"""The page of a report: sections, tables, figures, the HTML document, and writing it.

The building blocks every report (an evaluation, a plan, a study) is made of. A
:class:`Section` holds an HTML fragment; :func:`html_document` lays sections out as one
self-contained HTML5 page (styles inline, no script, no external resource);
:func:`write_report` writes it whole or not at all.
"""

from __future__ import annotations

import errno
import html as _html
import importlib.metadata
import os
import tempfile
from dataclasses import dataclass

__all__ = [
    "Section",
    "html_document",
    "table_html",
    "figure_html",
    "facts_html",
    "chart_section",
    "write_report",
    "check_report_path",
    "is_report",
    "GENERATOR",
]

#: ``<meta name="generator">`` of every report page: how a later run knows a file is a
#: report netdim wrote (which it may replace) and not a file of the user's (which it may not).
GENERATOR = "netdim report"

_STYLE = """
body{font-family:system-ui,"DejaVu Sans","Liberation Sans",Arial,sans-serif;color:#222;
margin:0 auto;max-width:1360px;padding:1.2em 1.6em;line-height:1.4;background:#fff}
h1{font-size:1.6em;margin:.2em 0}h2{font-size:1.25em;margin:1.6em 0 .4em;
border-bottom:1px solid #ccc;padding-bottom:.2em}
p.lead{font-size:1.05em;margin:.3em 0 1em}
nav a{margin-right:1em;color:#2f5d8a}
dl.facts{display:grid;grid-template-columns:max-content auto;gap:.15em 1.2em;margin:.6em 0}
dl.facts dt{font-weight:600}dl.facts dd{margin:0}
div.table{overflow-x:auto}
table{border-collapse:collapse;font-size:.86em;margin:.4em 0}
th,td{padding:.22em .55em;border-bottom:1px solid #e2e2e2;vertical-align:bottom}
td{white-space:nowrap}tr.unbuilt td{color:#888}
th{background:#f2f4f7;text-align:left;font-weight:600}
td.num{text-align:right;font-variant-numeric:tabular-nums}th.num{text-align:right}
tbody tr:nth-child(even){background:#fafafa}
td.v-met{color:#1e6b47;font-weight:600}td.v-missed{color:#b02a1e;font-weight:700}
td.v-unclear{color:#8a5a00;font-weight:600}
p.legend,figcaption{font-size:.85em;color:#555;margin:.3em 0 .8em;max-width:62em}
figure{margin:.6em 0}figure svg{max-width:100%;height:auto;display:block}
ul.cautions li{margin:.3em 0}
footer{margin-top:2.5em;font-size:.8em;color:#777;border-top:1px solid #ddd;padding-top:.5em}
@media print{nav{display:none}h2{break-after:avoid}figure,table{break-inside:avoid}}
"""


def _version() -> str:
    # From the installed metadata: importing the package root here would make a cycle once
    # netdim/__init__.py exports the report functions.
    try:
        return importlib.metadata.version("netdim")
    except importlib.metadata.PackageNotFoundError:
        return "(version unknown)"


def _e(text) -> str:
    return _html.escape(str(text), quote=True)


@dataclass(frozen=True)
class Section:
    """One part of a report page.

    Attributes
    ----------
    id : str
        The section's anchor (``<section id=...>``), unique in the page.
    title : str
        Heading, plain text.
    body : str
        HTML fragment, already escaped (build it with :func:`table_html`,
        :func:`figure_html` or :func:`html.escape`).
    """

    id: str
    title: str
    body: str


# -- building blocks ------------------------------------------------------------------------
def table_html(table_id, headers, columns, row_ids=None, legend=None, row_css=None) -> str:
    """A table from columns of :class:`~netdim.report.cells.Cell`.

    Parameters
    ----------
    table_id : str
    headers : sequence of str
        Plain text, units included (``'offered (E)'``).
    columns : sequence of sequences of Cell
        One per header, all of the same length.
    row_ids : sequence of str, optional
        ``data-id`` of each row (the demand or link id).
    legend : sequence of str, optional
        Lines under the table explaining its headers.
    row_css : sequence of str, optional
        Class of each row (``'unbuilt'`` greys a link that is not built).
    """
    n = len(columns[0]) if columns else 0
    if any(len(c) != n for c in columns) or len(headers) != len(columns):
        raise ValueError(f"table {table_id}: headers and columns differ in length")
    numeric = [any(c.value is not None for c in col) for col in columns]
    head = "".join(f'<th class="num">{_e(h)}</th>' if num else f"<th>{_e(h)}</th>"
                   for h, num in zip(headers, numeric, strict=True))
    rows = []
    for i in range(n):
        rid = "" if row_ids is None else f' data-id="{_e(row_ids[i])}"'
        css = f' class="{_e(row_css[i])}"' if row_css is not None and row_css[i] else ""
        rows.append(f"<tr{rid}{css}>" + "".join(col[i].html() for col in columns) + "</tr>")
    out = (f'<div class="table"><table id="{_e(table_id)}"><thead><tr>{head}</tr></thead>'
           "<tbody>" + "\n".join(rows) + "</tbody></table></div>")
    if legend:
        out += "".join(f'<p class="legend">{_e(line)}</p>' for line in legend)
    return out


def figure_html(svg, caption, figure_id=None) -> str:
    """An inline SVG picture (from :mod:`netdim.report.figures`) with its caption."""
    fid = "" if figure_id is None else f' id="{_e(figure_id)}"'
    return f'<figure class="plot"{fid}>{svg}<figcaption>{_e(caption)}</figcaption></figure>'


def chart_section(section_id, title, svg, caption) -> Section:
    """A section holding one picture: what a study adds for its failure, growth, comparison
    or cost-against-target chart."""
    return Section(section_id, title, figure_html(svg, caption, f"fig-{section_id}"))


def facts_html(pairs) -> str:
    """A list of (label, text) pairs as a two-column definition list."""
    return '<dl class="facts">' + "".join(
        f"<dt>{_e(k)}</dt><dd>{_e(v)}</dd>" for k, v in pairs) + "</dl>"


def html_document(title, sections, *, lead=None) -> str:
    """The whole page: a title, a line of lead text, a contents bar and the sections.

    Parameters
    ----------
    title : str
    sections : sequence of Section
    lead : str, optional
        One sentence under the title (the verdict of the run).

    Returns
    -------
    str
        A complete HTML5 document with no external resource.
    """
    ids = [s.id for s in sections]
    if len(set(ids)) != len(ids):
        dup = next(i for i in ids if ids.count(i) > 1)
        raise ValueError(f"html_document: section id '{dup}' is used twice")
    nav = "".join(f'<a href="#{_e(s.id)}">{_e(s.title)}</a>' for s in sections)
    body = "\n".join(f'<section id="{_e(s.id)}"><h2>{_e(s.title)}</h2>\n{s.body}\n</section>'
                     for s in sections)
    lead_html = "" if lead is None else f'<p class="lead">{_e(lead)}</p>'
    return (
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
        '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f'<meta name="generator" content="{GENERATOR} {_e(_version())}">\n'
        f"<title>{_e(title)}</title>\n<style>{_STYLE}</style>\n</head>\n<body>\n"
        f"<header><h1>{_e(title)}</h1>{lead_html}<nav>{nav}</nav></header>\n{body}\n"
        f"<footer>Made by netdim {_e(_version())}. Figures are planning estimates; "
        "see the cautions.</footer>\n</body>\n</html>\n"
    )


# -- writing --------------------------------------------------------------------------------
def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def write_report(html, path) -> str:
    """Write ``html`` to ``path`` whole or not at all.

    The text goes to a temporary file in the same directory, is flushed to disk, and is
    renamed over ``path`` (:func:`os.replace`), so a reader sees the old file or the new
    one, never half of one; on any failure the temporary file is removed and ``path`` is
    left as it was. The file gets mode 0644 less the process's umask.

    Parameters
    ----------
    html : str
    path : str or os.PathLike

    Returns
    -------
    str
        The path written.

    Raises
    ------
    OSError
        The directory does not exist or cannot be written, or ``path`` is a directory.

    Examples
    --------
    >>> import os, pathlib, tempfile
    >>> folder = tempfile.mkdtemp()
    >>> path = write_report("<!DOCTYPE html><title>t</title>", os.path.join(folder, "r.html"))
    >>> pathlib.Path(path).read_text()
    '<!DOCTYPE html><title>t</title>'
    >>> sorted(os.listdir(folder))  # no temporary file left beside it
    ['r.html']
    >>> write_report("x", os.path.join(folder, "missing", "r.html"))  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    FileNotFoundError: [Errno 2] cannot write the report: no such directory: '...missing'
    """
    path = os.fspath(path)
    directory = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(directory):
        raise FileNotFoundError(errno.ENOENT, "cannot write the report: no such directory",
                                directory)
    if os.path.isdir(path):
        raise IsADirectoryError(errno.EISDIR, "cannot write the report: is a directory", path)
    data = html.encode("utf-8")
    fd, tmp = tempfile.mkstemp(prefix=".netdim-report-", suffix=".tmp", dir=directory)
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(data)
            f.flush()
            os.fsync(f.fileno())
        os.chmod(tmp, 0o644 & ~_umask())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    return path


def is_report(path) -> bool:
    """Whether ``path`` is a report page netdim wrote (its head names netdim as generator).

    Only the first 4 KiB are read: the ``<meta>`` comes before any content.
    """
    try:
        with open(path, "rb") as f:
            head = f.read(4096)
    except OSError:
        return False
    return f'<meta name="generator" content="{GENERATOR} '.encode() in head


def _same(a, b) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return os.path.abspath(a) == os.path.abspath(b)


def check_report_path(path, *, inputs=(), outputs=(), force=False) -> None:
    """Refuse, before any work, a report path that would lose something.

    A report may replace an earlier report (a page netdim wrote, see :func:`is_report`). It
    never replaces a file it was given to read (``inputs``) or another file the same run
    writes (``outputs``); another existing file only when ``force``.

    Parameters
    ----------
    path : str or os.PathLike
        Where the report is to go.
    inputs, outputs : sequence of str
        Files the run reads, and files (or directories) it writes besides the report.
    force : bool
        Allow replacing an existing file that is not a netdim report.

    Raises
    ------
    ValueError
        ``path`` is one of ``inputs`` or ``outputs``, a directory, or an existing file that
        is not a report and not ``force``.
    FileNotFoundError
        The directory of ``path`` does not exist.
    """
    path = os.fspath(path)
    for other in inputs:
        if other and _same(path, other):
            raise ValueError(f"{path}: is the input file; the report would replace it "
                             "(write the report to another file)")
    for other in outputs:
        if other and _same(path, other):
            raise ValueError(f"{path}: is also written by this run; the report needs a "
                             "file of its own")
    if os.path.isdir(path):
        raise ValueError(f"{path}: is a directory; the report needs a file name "
                         "(such as report.html)")
    directory = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(directory):
        raise FileNotFoundError(errno.ENOENT, "cannot write the report: no such directory",
                                directory)
    if os.path.exists(path) and not force and not is_report(path):
        raise ValueError(f"{path}: exists and is not a netdim report; refused to write over "
                         "it (choose another name, or add --force to replace it)")

"""The pictures of the HTML report, each drawn with matplotlib and returned as SVG text.

Every function takes plain figures (arrays, lists of ids) and returns one ``<svg>`` element
ready to be written inline into an HTML page: no XML declaration, no metadata, no namespace
URLs, ``href`` instead of ``xlink:href``, and every ``id`` prefixed with a hash of the picture
so that several pictures can share a page. The output is deterministic: a fixed
``svg.hashsalt``, no date, text drawn as paths (no font is needed to view it).

matplotlib is the optional extra ``netdim[report]``; it is imported when a picture is drawn,
so ``import netdim.report.figures`` works without it. The figures are built with
:class:`matplotlib.figure.Figure` directly (no pyplot, no global backend change).
"""

from __future__ import annotations

import hashlib
import io
import math
import re

import networkx as nx
import numpy as np

from netdim.erlang import erlang_b
from netdim.errors import NetdimError

__all__ = [
    "site_positions",
    "network_map",
    "erlang_curve",
    "erlang_curves",
    "cost_against_target",
    "failure_chart",
    "growth_chart",
    "comparison_chart",
    "headroom_chart",
    "LAYOUT_SEED",
    "require_matplotlib",
]

#: Seed of the networkx layout used when the sites have no coordinates.
LAYOUT_SEED = 7
#: Blocking shown at the foot of a logarithmic axis; smaller values are drawn there.
_FLOOR = 1e-6
_MISS = "#c0392b"
_OK = "#2e7d5b"
_INK = "#333333"
_GREY = "#9a9a9a"


def _mpl():
    """matplotlib, or a NetdimError saying how to install it."""
    # Optional heavy import (the netdim[report] extra): only a report needs it.
    try:
        import matplotlib
        from matplotlib.figure import Figure
    except ImportError:
        raise NetdimError(
            "HTML report: needs matplotlib, which is not installed; "
            "install it with: pip install 'netdim[report]'"
        ) from None
    return matplotlib, Figure


def require_matplotlib() -> None:
    """Raise the :class:`~netdim.errors.NetdimError` of a missing matplotlib now, before a
    long run whose report could not be drawn."""
    _mpl()


_STYLE = {
    "svg.hashsalt": "netdim",
    "svg.fonttype": "path",
    "font.size": 9,
    "axes.titlesize": 10,
    "axes.edgecolor": "#666666",
    "axes.spines.top": False,
    "axes.spines.right": False,
    "figure.dpi": 72,
}


def _figure(width, height):
    matplotlib, Figure = _mpl()
    with matplotlib.rc_context(_STYLE):
        fig = Figure(figsize=(width, height), layout="constrained")
    return matplotlib, fig


def _svg(matplotlib, fig, label) -> str:
    """The figure as an inline ``<svg>`` element (see the module notes)."""
    buf = io.StringIO()
    with matplotlib.rc_context(_STYLE):
        fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None})
    text = buf.getvalue()
    text = text[text.index("<svg"):]
    text = re.sub(r"\s*<metadata>.*?</metadata>", "", text, count=1, flags=re.S)
    text = re.sub(r'\s+xmlns(:xlink)?="[^"]*"', "", text)
    text = text.replace("xlink:href=", "href=")
    # Ids named after the picture itself: unique between different pictures on one page,
    # and the same on every run (no counter to depend on what was drawn before).
    prefix = "nd" + hashlib.sha1(text.encode("utf-8")).hexdigest()[:10] + "-"
    ids = set(re.findall(r'\bid="([^"]+)"', text))

    def rename(m):
        return m.group(1) + prefix + m.group(2) + m.group(3) if m.group(2) in ids else m.group(0)

    text = re.sub(r'(\bid="|href="#|url\(#)([^")]+)([")])', rename, text)
    label = label.replace("&", "&amp;").replace('"', "&quot;").replace("<", "&lt;")
    return text.replace("<svg ", f'<svg role="img" aria-label="{label}" ', 1).strip()


# -- the network map -----------------------------------------------------------------------
def site_positions(network, seed=LAYOUT_SEED) -> dict:
    """Drawing position of every site: its ``x``, ``y`` when given, else a layout.

    Sites without coordinates are placed by :func:`networkx.spring_layout` (seeded, so the
    same network is drawn the same way), the sites with coordinates held where they are.

    Returns
    -------
    dict
        Site id -> (x, y).
    """
    given = {s.id: (float(s.x), float(s.y)) for s in network.sites
             if s.x is not None and s.y is not None}
    if len(given) == len(network.sites):
        return given
    g = nx.Graph()
    g.add_nodes_from(s.id for s in network.sites)
    g.add_edges_from(link.ends for link in network.links)
    if given:
        span = np.ptp(np.array(list(given.values())), axis=0).max() or 1.0
        pos = nx.spring_layout(g, pos=given, fixed=list(given), seed=seed, k=span / 2)
    else:
        pos = nx.spring_layout(g, seed=seed)
    return {k: (float(v[0]), float(v[1])) for k, v in pos.items()}


def _units(n, unit) -> str:
    """``unit`` for ``n`` of them: ``1 circuit``, ``30 circuits``."""
    return unit[:-1] if n == 1 and unit.endswith("s") else unit


def _curve(p, q, bend, n=32):
    """Points of a quadratic Bezier curve from p to q bulging ``bend`` x its length."""
    p, q = np.asarray(p, float), np.asarray(q, float)
    d = q - p
    normal = np.array([-d[1], d[0]])
    ctrl = (p + q) / 2 + bend * normal
    t = np.linspace(0.0, 1.0, n)[:, None]
    return (1 - t) ** 2 * p + 2 * (1 - t) * t * ctrl + t**2 * q


def network_map(network, capacity, value, *, measure="utilisation", unit="units",
                title=None) -> str:
    """The network drawn from its site positions, links coloured by ``value``.

    Parameters
    ----------
    network : Network
    capacity : array_like of int, one per link
        Line widths grow with capacity; a link of capacity 0 (an unbuilt candidate) is
        drawn dashed and grey.
    value : array_like of float, one per link
        Utilisation in [0, 1] (``measure='utilisation'``) or blocking (``'blocking'``,
        on a logarithmic colour scale).
    measure : {'utilisation', 'blocking'}
    unit : str
        Name of a capacity unit in the width legend (``circuits``, ``spaces``...).
    title : str, optional

    Returns
    -------
    str
        An ``<svg>`` element.
    """
    matplotlib, fig = _figure(8.0, 6.0)
    # optional heavy import (netdim[report]); _figure has said how to install it if missing
    from matplotlib import colormaps, colors, ticker
    from matplotlib.cm import ScalarMappable
    from matplotlib.lines import Line2D

    cap = np.asarray(capacity, dtype=float)
    val = np.asarray(value, dtype=float)
    if measure not in ("utilisation", "blocking"):
        raise ValueError(f"measure: expected 'utilisation' or 'blocking', got {measure!r}")
    pos = site_positions(network)
    ax = fig.add_subplot()
    ax.set_aspect("equal")
    ax.set_axis_off()
    base = colormaps["YlOrRd"]
    cmap = colors.LinearSegmentedColormap.from_list("netdim", base(np.linspace(0.3, 1.0, 256)))
    if measure == "utilisation":
        norm = colors.Normalize(0.0, 1.0)
        label = "utilisation (carried load / capacity)"
    else:
        norm = colors.LogNorm(1e-4, 1.0, clip=True)
        label = "first-choice blocking"
    top = cap.max() if len(cap) and cap.max() > 0 else 1.0

    def width(c):
        return 1.0 + 7.0 * math.sqrt(c / top)

    groups = {}
    for j, link in enumerate(network.links):
        groups.setdefault(frozenset(link.ends), []).append(j)
    xy = np.array(list(pos.values()))
    scale = float(np.ptp(xy, axis=0).max()) if len(xy) > 1 else 1.0
    for members in groups.values():
        n = len(members)
        for r, j in enumerate(members):
            a, b = network.links[j].ends
            bend = 0.0 if n == 1 else 0.35 * (r - (n - 1) / 2) / max(1, (n - 1) / 2)
            pts = _curve(pos[a], pos[b], bend)
            built = cap[j] > 0
            ax.plot(pts[:, 0], pts[:, 1], solid_capstyle="round",
                    color=cmap(norm(max(val[j], 1e-12))) if built else _GREY,
                    lw=width(cap[j]) if built else 1.2, ls="-" if built else (0, (4, 3)),
                    zorder=1)
            # 40% of the way along, not half: a straight link's midpoint can fall on a site
            mid = pts[len(pts) // 2] if n > 1 else pts[int(0.4 * (len(pts) - 1))]
            text = f"{network.links[j].id} {int(cap[j])}" if n > 1 else f"{int(cap[j])}"
            ax.annotate(text, mid, ha="center", va="center", fontsize=7, color=_INK, zorder=3,
                        bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none",
                              "alpha": 0.85})
    ax.scatter(xy[:, 0], xy[:, 1], s=90, c="white", edgecolors=_INK, linewidths=1.2,
               zorder=2)
    for sid, (x, y) in pos.items():
        ax.annotate(sid, (x, y), xytext=(0, 8), textcoords="offset points", ha="center",
                    va="bottom", fontsize=8, fontweight="bold", color=_INK, zorder=4,
                    bbox={"boxstyle": "round,pad=0.2", "fc": "white", "ec": "#bbbbbb",
                          "lw": 0.6})
    pad = 0.08 * scale
    ax.set_xlim(xy[:, 0].min() - pad, xy[:, 0].max() + pad)
    ax.set_ylim(xy[:, 1].min() - pad, xy[:, 1].max() + 2 * pad)
    bar = fig.colorbar(ScalarMappable(norm=norm, cmap=cmap), ax=ax, shrink=0.7, pad=0.02)
    bar.set_label(label)
    if measure == "utilisation":
        bar.ax.yaxis.set_major_formatter(ticker.PercentFormatter(1.0))
    built_caps = np.unique(cap[cap > 0])
    samples = sorted({int(built_caps[k]) for k in (0, len(built_caps) // 2, -1)}
                     ) if len(built_caps) else []
    handles = [Line2D([], [], color=_INK, lw=width(c), label=f"{c} {_units(c, unit)}")
               for c in samples]
    if (cap == 0).any():
        handles.append(Line2D([], [], color=_GREY, lw=1.2, ls=(0, (4, 3)),
                              label="not built (capacity 0)"))
    ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, 0.0), ncol=4,
              frameon=False, fontsize=8, title="line width: capacity; number: capacity",
              title_fontsize=8)
    if title:
        ax.set_title(title)
    return _svg(matplotlib, fig, title or "network map")


# -- blocking against offered load ----------------------------------------------------------
def erlang_curve(capacity, offered, points=240):
    """The points of one link's curve: offered loads up to ``max(1.6 offered, 1.3 capacity)``
    and Erlang B of each at ``capacity``.

    Returns
    -------
    (ndarray, ndarray)
        Offered loads (erlangs) and blocking.
    """
    hi = max(1.6 * float(offered), 1.3 * int(capacity), 1.0)
    a = np.linspace(hi / points, hi, points)
    return a, erlang_b(a, int(capacity))


def erlang_curves(link_ids, capacity, offered, blocking, *, blocking_alternate=None,
                  interval=None, unit="units") -> str:
    """Erlang B against offered load for a few links, each with its operating point.

    One panel per link: the curve E(A, c) for the link's capacity c over a range of
    offered loads A, and the point (offered load, blocking) the evaluation found. Where
    overflow calls meet a different blocking (trunk reservation) it is drawn too.

    Parameters
    ----------
    link_ids : sequence of str
    capacity : array_like of int
    offered, blocking : array_like of float
        Load offered to each link (erlangs) and the first-choice blocking there.
    blocking_alternate : array_like of float, optional
        Blocking an overflow call meets on each link.
    interval : array_like, shape (n, 2), optional
        Confidence interval of ``blocking`` (simulation), drawn as an error bar.
    unit : str
        Name of a capacity unit for the panel titles.

    Returns
    -------
    str
        An ``<svg>`` element.

    References
    ----------
    .. [1] A. K. Erlang, "Solution of some problems in the theory of probabilities of
       significance in automatic telephone exchanges", Elektroteknikeren 13 (1917).
    """
    n = len(link_ids)
    if n == 0:
        raise ValueError("erlang_curves: no links to draw")
    cols = min(n, 2)
    rows = math.ceil(n / cols)
    matplotlib, fig = _figure(4.0 * cols, 2.9 * rows)
    axes = fig.subplots(rows, cols, squeeze=False).ravel()
    for ax in axes[n:]:
        ax.set_visible(False)
    for i, ax in enumerate(axes[:n]):
        c = int(capacity[i])
        a0 = float(offered[i])
        a, e = erlang_curve(c, a0)
        hi = float(a[-1])
        ax.plot(a, np.maximum(e, _FLOOR / 10), color="#2f5d8a", lw=1.6,
                label=f"Erlang B, {c} {_units(c, unit)}")
        b = max(float(blocking[i]), _FLOOR)
        marker = "o" if float(blocking[i]) >= _FLOOR else "v"
        if interval is not None:
            lo, up = (max(float(v), _FLOOR) for v in interval[i])
            ax.errorbar([a0], [b], yerr=[[b - lo], [up - b]], fmt="none", ecolor=_INK,
                        capsize=3, lw=1)
        ax.plot([a0], [b], marker, color=_MISS, ms=7, label="first-choice calls")
        if blocking_alternate is not None and not np.isclose(blocking_alternate[i],
                                                             blocking[i], rtol=1e-6, atol=0):
            ba = max(float(blocking_alternate[i]), _FLOOR)
            ax.plot([a0], [ba], "^", color="#7b4fa0", ms=7, label="overflow calls")
        ax.axvline(a0, color=_GREY, lw=0.8, ls=":")
        ax.set_yscale("log")
        _log_axis(ax.yaxis)
        ax.set_ylim(_FLOOR / 2, 1.5)
        ax.set_xlim(0, hi)
        ax.set_title(f"{link_ids[i]}: {a0:.1f} E offered to {c}", fontsize=9)
        ax.set_xlabel("offered load (erlangs)")
        ax.set_ylabel("blocking")
        ax.grid(True, which="major", color="#e4e4e4", lw=0.6)
        ax.legend(fontsize=7, loc="lower right", frameon=False)
    return _svg(matplotlib, fig, "blocking against offered load, busiest links")


# -- charts for the studies -----------------------------------------------------------------
def _log_axis(axis):
    """A logarithmic axis with labelled decades only (minor tick labels cost seconds)."""
    from matplotlib import ticker  # optional heavy import (netdim[report]), already loaded

    axis.set_major_locator(ticker.LogLocator(base=10, numticks=8))
    axis.set_minor_locator(ticker.NullLocator())
    axis.set_major_formatter(ticker.FuncFormatter(_decade))


_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def _decade(value, _pos=None) -> str:
    """``10⁻⁴`` for 1e-4: plain text with superscript digits (mathtext costs a second a
    figure)."""
    if value <= 0:
        return ""
    k = round(math.log10(value))
    if abs(math.log10(value) - k) > 1e-9:
        return f"{value:g}"
    return "1" if k == 0 else "10" + str(k).translate(_SUPERSCRIPT)


def _check_lengths(name, *arrays):
    sizes = {len(a) for a in arrays if a is not None}
    if len(sizes) > 1:
        raise ValueError(f"{name}: the arrays differ in length ({sorted(sizes)})")
    if sizes == {0}:
        raise ValueError(f"{name}: nothing to draw")


def cost_against_target(targets, costs, *, lower_bounds=None, current=None) -> str:
    """Least cost against a common blocking target (a sweep of sized plans).

    Parameters
    ----------
    targets : array_like of float
        Blocking targets, in (0, 1) (drawn on a logarithmic axis).
    costs : array_like of float
        Cost of the plan sized for each target (NaN where none was found).
    lower_bounds : array_like of float, optional
        The lower bound of each plan, drawn dashed.
    current : float, optional
        A target to mark (the network's own).

    Returns
    -------
    str
        An ``<svg>`` element.
    """
    t, c = np.asarray(targets, float), np.asarray(costs, float)
    _check_lengths("cost_against_target", t, c, lower_bounds)
    if not np.all((t > 0) & (t < 1)):
        raise ValueError("cost_against_target: targets must lie in (0, 1)")
    order = np.argsort(t)
    matplotlib, fig = _figure(6.0, 3.6)
    ax = fig.add_subplot()
    ax.plot(t[order], c[order], "o-", color="#2f5d8a", label="cost of the plan")
    if lower_bounds is not None:
        lb = np.asarray(lower_bounds, float)[order]
        ax.plot(t[order], lb, "s--", color=_GREY, ms=4, label="lower bound")
    if current is not None:
        ax.axvline(float(current), color=_MISS, lw=1, ls=":", label=f"target {current:g}")
    ax.set_xscale("log")
    _log_axis(ax.xaxis)
    ax.set_xlabel("blocking target (every demand)")
    ax.set_ylabel("cost")
    ax.grid(True, color="#e4e4e4", lw=0.6)
    ax.legend(fontsize=8, frameon=False)
    return _svg(matplotlib, fig, "cost against blocking target")


def failure_chart(failed, worst_blocking, *, target=None, missed=None) -> str:
    """Worst end-to-end blocking after each single failure, as horizontal bars.

    Parameters
    ----------
    failed : sequence of str
        What failed in each case (a link id).
    worst_blocking : array_like of float
        Highest demand blocking in each case (logarithmic axis).
    target : float or array_like, optional
        The target line (one value), or one target per case (the worst demand's).
    missed : array_like of int, optional
        Demands missing their target in each case, written beside the bar.

    Returns
    -------
    str
        An ``<svg>`` element.
    """
    w = np.asarray(worst_blocking, float)
    _check_lengths("failure_chart", failed, w, missed)
    n = len(w)
    matplotlib, fig = _figure(6.0, 1.2 + 0.28 * n)
    ax = fig.add_subplot()
    y = np.arange(n)[::-1]
    tgt = None if target is None else np.broadcast_to(np.asarray(target, float), (n,))
    colour = [_GREY if tgt is None else (_MISS if w[i] > tgt[i] else _OK) for i in range(n)]
    ax.barh(y, np.maximum(w, _FLOOR), left=_FLOOR / 2, color=colour, height=0.65)
    if tgt is not None and np.allclose(tgt, tgt[0]):
        ax.axvline(tgt[0], color=_INK, lw=1, ls="--", label=f"target {tgt[0]:g}")
        ax.legend(fontsize=8, frameon=False, loc="lower right")
    if missed is not None:
        for i in range(n):
            ax.annotate(f"{int(missed[i])} missed", (max(w[i], _FLOOR), y[i]), xytext=(4, 0),
                        textcoords="offset points", va="center", fontsize=7)
    ax.set_xscale("log")
    _log_axis(ax.xaxis)
    ax.set_xlim(_FLOOR / 2, 1.5)
    ax.set_yticks(y, [str(f) for f in failed])
    ax.set_xlabel("worst demand blocking after the failure")
    ax.grid(True, axis="x", color="#e4e4e4", lw=0.6)
    return _svg(matplotlib, fig, "worst blocking after each failure")


def growth_chart(years, costs, *, worst_blocking=None, target=None, capacity=None) -> str:
    """Cost by year of traffic growth, and the worst blocking if the plan is not grown.

    Parameters
    ----------
    years : array_like of int
    costs : array_like of float
        Cost of the plan for each year's traffic.
    worst_blocking : array_like of float, optional
        Worst demand blocking each year (e.g. at today's capacities), a second panel.
    target : float, optional
        Target line in the blocking panel.
    capacity : array_like of float, optional
        Capacity in place at the end of each year (all links), a panel of its own.

    Returns
    -------
    str
        An ``<svg>`` element.
    """
    yr, c = np.asarray(years), np.asarray(costs, float)
    _check_lengths("growth_chart", yr, c, worst_blocking, capacity)
    panels = 1 + (capacity is not None) + (worst_blocking is not None)
    matplotlib, fig = _figure(6.0, 2.6 * panels)
    axes = fig.subplots(panels, 1, sharex=True, squeeze=False).ravel()
    axes[0].plot(yr, c, "o-", color="#2f5d8a")
    axes[0].set_ylabel("cost")
    axes[0].set_ylim(0, max(1.0, 1.1 * float(np.nanmax(c))))  # costs are never negative
    k = 1
    if capacity is not None:
        cap = np.asarray(capacity, float)
        axes[k].step(yr, cap, "o-", where="post", color=_OK)
        axes[k].set_ylim(0, max(1.0, 1.1 * float(np.nanmax(cap))))
        axes[k].set_ylabel("capacity in place")
        k += 1
    if worst_blocking is not None:
        wb = np.maximum(np.asarray(worst_blocking, float), _FLOOR)
        axes[k].plot(yr, wb, "o-", color=_MISS)
        axes[k].set_yscale("log")
        _log_axis(axes[k].yaxis)
        axes[k].set_ylabel("worst blocking")
        if target is not None:
            axes[k].axhline(float(target), color=_INK, lw=1, ls="--", label=f"target {target:g}")
            axes[k].legend(fontsize=8, frameon=False)
    for ax in axes:
        ax.grid(True, color="#e4e4e4", lw=0.6)
    axes[-1].set_xlabel("year")
    axes[-1].set_xticks(yr)
    return _svg(matplotlib, fig, "cost and blocking by year")


def comparison_chart(names, costs, *, worst_blocking=None, target=None) -> str:
    """Variants side by side: cost, and worst blocking when given.

    Parameters
    ----------
    names : sequence of str
        One per variant (a topology, a routing policy, a method).
    costs : array_like of float
    worst_blocking : array_like of float, optional
    target : float, optional

    Returns
    -------
    str
        An ``<svg>`` element.
    """
    c = np.asarray(costs, float)
    _check_lengths("comparison_chart", names, c, worst_blocking)
    n = len(c)
    panels = 1 if worst_blocking is None else 2
    matplotlib, fig = _figure(3.4 * panels, 1.2 + 0.32 * n)
    axes = fig.subplots(1, panels, sharey=True, squeeze=False).ravel()
    y = np.arange(n)[::-1]
    axes[0].barh(y, c, color="#2f5d8a", height=0.65)
    axes[0].set_yticks(y, [str(s) for s in names])
    axes[0].set_xlabel("cost")
    if worst_blocking is not None:
        wb = np.asarray(worst_blocking, float)
        colour = [_GREY if target is None else (_MISS if v > target else _OK) for v in wb]
        axes[1].barh(y, np.maximum(wb, _FLOOR), left=_FLOOR / 2, color=colour, height=0.65)
        axes[1].set_xscale("log")
        _log_axis(axes[1].xaxis)
        axes[1].set_xlim(_FLOOR / 2, 1.5)
        axes[1].set_xlabel("worst demand blocking")
        if target is not None:
            axes[1].axvline(float(target), color=_INK, lw=1, ls="--")
    for ax in axes:
        ax.grid(True, axis="x", color="#e4e4e4", lw=0.6)
    return _svg(matplotlib, fig, "comparison of the variants")


def headroom_chart(scopes, multipliers, *, bracket=None, unbounded_at=None) -> str:
    """How far each demand alone can grow, as horizontal bars, with the network's bracket.

    Parameters
    ----------
    scopes : sequence of str
        One per bar (a demand id).
    multipliers : array_like of float
        Largest traffic multiplier at which every target still holds with that demand
        alone grown; NaN where none was found below ``unbounded_at`` (drawn hatched there).
    bracket : (float, float), optional
        The multiplier of every demand grown together at which every target holds, and the
        one at which some target fails: a shaded band.
    unbounded_at : float, optional
        Where to draw the bars with no limit found (default twice the largest one).

    Returns
    -------
    str
        An ``<svg>`` element.
    """
    m = np.asarray(multipliers, float)
    _check_lengths("headroom_chart", scopes, m)
    n = len(m)
    finite = m[np.isfinite(m)]
    top = float(unbounded_at) if unbounded_at is not None else \
        (2.0 * float(finite.max()) if len(finite) else 2.0)
    shown = np.where(np.isfinite(m), m, top)
    matplotlib, fig = _figure(6.0, 1.4 + 0.28 * n)
    ax = fig.add_subplot()
    y = np.arange(n)[::-1]
    colour = [_MISS if v < 1 else _OK for v in shown]
    bars = ax.barh(y, shown, color=colour, height=0.65)
    for bar, ok in zip(bars, np.isfinite(m), strict=True):
        if not ok:
            bar.set_hatch("//")
            bar.set_alpha(0.6)
    ax.axvline(1.0, color=_INK, lw=1, ls=":", label="today's traffic", zorder=3)
    if bracket is not None and bracket[0] is not None:
        low = float(bracket[0])
        high = low if bracket[1] is None else float(bracket[1])
        ax.axvspan(low, max(high, low * 1.004), color="#2f5d8a", alpha=0.5, zorder=3,
                   label=f"all demands together: holds at {low:.4f}, fails at {high:.4f}")
    ax.set_yticks(y, [str(s) for s in scopes])
    if len(finite) and shown.max() / max(shown.min(), 1e-12) > 20:
        ax.set_xscale("log")
    ax.set_xlabel("traffic multiplier at which every target still holds")
    ax.grid(True, axis="x", color="#e4e4e4", lw=0.6)
    fig.legend(fontsize=8, frameon=False, loc="outside lower center", ncols=2)
    return _svg(matplotlib, fig, "headroom of each demand")

"""HTML reports of evaluations and plans over the day (issue 20): occupancy over the day per
link, blocking by period per demand.

Outside references: the page's tables are parsed back with the standard library's
html.parser (tests/test_report_html.py's ``Page``) and compared, cell by cell, with the
``--json`` output of the same command on the same file (the JSON contract); on the issue's
park the per-period blocking is also checked against the M(t)/M/c/c forward equations
solved here by ``solve_ivp`` (``forward_day`` of tests/test_daily_evaluate.py; Feller vol. 1
ch. XVII, from memory), and the busy-hour figure against Erlang B by mpmath (Erlang 1917):
45/h x 2 h = 90 E asks 107 at 1 %. The campus day is demo data: its figures are whatever
the run produced, never hard-coded.
"""

from __future__ import annotations

import json
import pathlib
import re

import numpy as np
import pytest

pytest.importorskip("matplotlib")

from test_report_html import Page

from netdim.cli import main
from netdim.evaluate import evaluate
from netdim.netfile import loads_network
from netdim.report.day_figures import clock_ticks, occupancy_chart
from netdim.report.day_text import clock
from netdim.report.html import evaluation_html
from tests.erlang_mpmath import mp_erlang
from tests.test_daily_evaluate import WAVE, forward_day, park

ROOT = pathlib.Path(__file__).parent.parent
CAMPUS_DAY = str(ROOT / "examples" / "campus_day.yaml")


def _value(cell):
    return float(cell["attrs"]["data-value"])


def _check_day_tables(page, d, period_hours=None):
    """Every cell of the day tables is the figure of ``d`` (an evaluation's to_dict(), or a
    plan's: its links carry no occupancy, only the capacity is compared there; its periods
    are ``period_hours``)."""
    demands = page.tables["t-day-demands"]
    head = demands["head"]
    hours = np.asarray(d["day"]["period_hours"] if period_hours is None else period_hours)
    periods = len(hours)
    starts = np.cumsum(hours) - hours
    assert head[-periods:] == [f"period {p} ({clock(float(starts[p]))})"
                               for p in range(periods)]
    assert [r["id"] for r in demands["rows"]] == [r["id"] for r in d["demands"]]
    checked = 0
    for row, rec in zip(demands["rows"], d["demands"], strict=True):
        cells = dict(zip(head, row["cells"], strict=True))
        assert _value(cells["target"]) == rec["target"]
        assert int(_value(cells["worst period"])) == rec["peak_period"]
        assert cells["starts"]["text"] == clock(float(starts[rec["peak_period"]]))
        there = next(k for k in head if k.startswith("blocking there"))
        lost = next(k for k in head if k.startswith("lost share"))
        assert _value(cells[there]) == rec["peak_blocking"]
        assert _value(cells[lost]) == rec["lost_fraction"]
        for p in range(periods):
            cell = row["cells"][len(head) - periods + p]
            assert _value(cell) == rec["blocking_by_period"][p]
            if "blocking_by_period_interval" in rec:
                lo, hi = rec["blocking_by_period_interval"][p]
                assert float(cell["attrs"]["data-low"]) == lo
                assert float(cell["attrs"]["data-high"]) == hi
            checked += 1
    assert checked == len(d["demands"]) * periods
    links = page.tables["t-day-links"]
    lh = links["head"]
    assert [r["id"] for r in links["rows"]] == [r["id"] for r in d["links"]]
    for row, rec in zip(links["rows"], d["links"], strict=True):
        cells = dict(zip(lh, row["cells"], strict=True))
        cap = next(k for k in lh if k.startswith("capacity"))
        assert int(_value(cells[cap])) == rec["capacity"]
        if "occupancy" not in rec:
            continue
        occ = rec["occupancy"]
        peak = next(k for k in lh if k.startswith("peak mean occupancy"))
        point = next(k for k in lh if re.match(r"peak \d+% point", k))
        assert _value(cells[peak]) == occ["peak"]
        assert _value(cells["at"]) == occ["peak_time"]
        assert cells["at"]["text"] == clock(occ["peak_time"])
        assert int(_value(cells[point])) == occ["peak_quantile"]
        assert _value(cells["worst period full"]) == max(rec["blocking_by_period"])


def _run(capsys, argv):
    status = main(argv)
    return status, capsys.readouterr().out


# -- the park: quick, and checked against the forward equations ---------------------
def test_park_evaluation_page_holds_the_day_and_the_forward_equations():
    net = loads_network(park(70))
    ev = evaluate(net)
    page_text = evaluation_html(net, ev, kind="parking")
    page = Page(page_text)
    for sid in ("day-occupancy", "day-demands", "day-links", "fig-day-occupancy"):
        assert sid in page.ids
    assert 'aria-label="occupancy over the day, per link"' in page_text
    _check_day_tables(page, ev.to_dict())
    b, lost = forward_day(WAVE, 70, 2.0)
    row = page.tables["t-day-demands"]["rows"][0]["cells"]
    by_period = [_value(c) for c in row[-len(WAVE):]]
    assert by_period == pytest.approx(b, abs=1e-9)
    head = page.tables["t-day-demands"]["head"]
    assert _value(row[head.index("lost share")]) == pytest.approx(lost, rel=1e-9)
    # the worst period is the sixth hour (index 5), as in the issue
    assert int(_value(row[head.index("worst period")])) == 5 == int(np.argmax(b))
    # the caution a day report carries, and no claim of a steady peak rate
    assert "Day profiles must be measured" in page_text
    assert "steady peak rate" not in page_text
    assert "exact transient solution" in page_text


def test_park_plan_page_claims_no_bound_and_gives_the_busy_hour_way(tmp_path, capsys):
    path = tmp_path / "park.yaml"
    path.write_text(park(70).replace(", capacity: 70", "") + "    target: 0.01\n")
    out = tmp_path / "plan.html"
    status, _ = _run(capsys, ["size", str(path), "--quiet", "--report", str(out)])
    status_json, text = _run(capsys, ["size", str(path), "--quiet", "--json"])
    assert status == status_json == 0
    d = json.loads(text)
    html = out.read_text(encoding="utf-8")
    page = Page(html)
    _check_day_tables(page, d, period_hours=[1.0] * len(WAVE))
    # Erlang B at the busy hour (90 E, mpmath): 107 is the least size at 1 %
    assert mp_erlang(90.0, 107) <= 0.01 < mp_erlang(90.0, 106)
    assert d["details"]["busy_hour_cost"] == 107.0
    summary = html[html.index('<section id="summary">'):html.index('<section id="bound">')]
    assert "none over the day" in summary and "gap" not in summary
    assert "<dt>busy-hour way</dt><dd>107 (" in summary
    bound = html[html.index('<section id="bound">'):html.index('<section id="map">')]
    assert "No lower bound is claimed" in bound and "cannot cost less than" not in bound
    assert "saves 27.1% of it" in bound  # 1 - 78 / 107, the size the plan has
    assert d["links"][0]["capacity"] == 78
    assert f"{100 * (1 - 78 / 107):.1f}%" == "27.1%"


def test_simulated_day_report_carries_the_intervals(tmp_path, capsys):
    path = tmp_path / "park.yaml"
    path.write_text(park(70, rates=[30, 45, 40, 30]))
    out = tmp_path / "sim.html"
    argv = ["--method", "day-simulate", "--seed", "5", "--calls", "2000"]
    status, _ = _run(capsys, ["report", str(path), "-o", str(out), "--quiet", *argv])
    status_json, text = _run(capsys, ["evaluate", str(path), "--json", *argv])
    assert status == status_json
    d = json.loads(text)
    html = out.read_text(encoding="utf-8")
    page = Page(html)
    _check_day_tables(page, d)
    head = page.tables["t-day-demands"]["head"]
    assert "blocking there (95% interval)" in head and "lost share (95% interval)" in head
    cell = page.tables["t-day-demands"]["rows"][0]["cells"][head.index(
        "lost share (95% interval)")]
    lo, hi = d["demands"][0]["lost_fraction_interval"]
    assert (float(cell["attrs"]["data-low"]), float(cell["attrs"]["data-high"])) == (lo, hi)
    assert "simulation over the day" in html and "seed 5" in html


@pytest.mark.slow  # two evaluations of the campus day and a report: about 3 s
def test_campus_day_report_holds_the_figures_of_evaluate_json(tmp_path, capsys):
    out = tmp_path / "campus.html"
    status, _ = _run(capsys, ["evaluate", CAMPUS_DAY, "--quiet", "--report", str(out),
                              "--kind", "parking"])
    status_json, text = _run(capsys, ["evaluate", CAMPUS_DAY, "--json"])
    assert status == status_json
    d = json.loads(text)
    html = out.read_text(encoding="utf-8")
    page = Page(html)
    _check_day_tables(page, d)
    assert page.ids[-1] == "cautions"
    assert "fig-day-occupancy" in page.ids
    # one panel per built link (text is drawn as paths: count the panels' axes)
    fig = html[html.index('<figure class="plot" id="fig-day-occupancy">'):]
    fig = fig[:fig.index("</figure>")]
    built = [r["id"] for r in d["links"] if r["capacity"] > 0]
    assert len(set(re.findall(r'id="nd[0-9a-f]{10}-(axes_\d+)"', fig))) == len(built)
    assert "Under alternate routing the day approximations are optimistic" in html
    # `netdim report` on the same file evaluates the day too and writes the same tables
    out2 = tmp_path / "campus2.html"
    assert main(["report", CAMPUS_DAY, "-o", str(out2), "--quiet"]) == status
    capsys.readouterr()
    _check_day_tables(Page(out2.read_text(encoding="utf-8")), d)


# -- the chart itself -------------------------------------------------------------------------
def test_occupancy_chart_draws_one_panel_per_link():
    t = np.linspace(0.0, 12.0, 49)
    mean = np.vstack([10 * np.sin(t / 4) ** 2, 5 + 0 * t])
    high = np.ceil(mean + 3)
    svg = occupancy_chart(["A", "B"], t, mean, high, [20, 8], level=0.9,
                          period_hours=np.ones(12), unit="places")
    assert svg.startswith("<svg ") and 'aria-label="occupancy over the day, per link"' in svg
    # titles are drawn as paths (no font needed), so count the panels by their axes
    assert len(set(re.findall(r'id="nd[0-9a-f]{10}-(axes_\d+)"', svg))) == 2
    assert list(clock_ticks(12.0)) == [0, 2, 4, 6, 8, 10, 12]
    assert list(clock_ticks(5.0)) == [0, 1, 2, 3, 4, 5]
    assert list(clock_ticks(24.0)) == [0, 4, 8, 12, 16, 20, 24]


def test_occupancy_chart_refuses_what_it_cannot_draw():
    t = np.linspace(0.0, 2.0, 5)
    with pytest.raises(ValueError, match=r"^occupancy_chart: no links to draw$"):
        occupancy_chart([], t, [], [], [])
    with pytest.raises(ValueError, match=r"^occupancy_chart: the arrays differ in length$"):
        occupancy_chart(["A"], t, np.zeros((1, 4)), np.zeros((1, 5)), [3])
    with pytest.raises(ValueError, match=r"^occupancy_chart: the arrays differ in length$"):
        occupancy_chart(["A"], t, np.zeros((1, 5)), np.zeros((1, 5)), [3, 4])

"""HTML reports of the studies: ``--report`` on failures, growth, compare and headroom.

Outside reference: each page's tables are parsed back with the standard library's
html.parser (tests/test_report_html.py's ``Page``) and compared, cell by cell, with the
``--json`` output of the same command on the same file (the JSON contract), and the lead
sentence with counts taken from that JSON. The bundled networks are demo data: the figures
checked are whatever the run produced, never hard-coded.
"""

from __future__ import annotations

import dataclasses
import json
import pathlib

import pytest

pytest.importorskip("matplotlib")

from test_report_html import Page

import netdim
from netdim.cli import main
from netdim.report.page import is_report
from netdim.report.studies import headroom_page
from netdim.studies.headroom import headroom_study

NETWORKS = pathlib.Path(__file__).parent.parent / "networks"
VILLAGES = str(NETWORKS / "three-villages.yaml")
# Short runs: two years of growth from the installed units only (so some year buys), one
# variant beside the file itself.
GROWTH = ["--rate", "30%", "--years", "2", "--start", "installed"]
COMPARE = ["--variants", "mesh", "--no-failures"]


def _run(capsys, argv):
    status = main(argv)
    out = capsys.readouterr()
    return status, out.out


def _page_and_json(capsys, tmp_path, command, extra=()):
    out = tmp_path / f"{command}.html"
    status, _ = _run(capsys, [command, VILLAGES, *extra, "--quiet", "--report", str(out)])
    status_json, text = _run(capsys, [command, VILLAGES, *extra, "--quiet", "--json"])
    assert status == status_json
    html = out.read_text(encoding="utf-8")
    page = Page(html)
    assert is_report(out)
    assert page.ids[-1] == "cautions"  # the cautions close the page
    return page, html, json.loads(text)


def _value(cell):
    return float(cell["attrs"]["data-value"])


def _lead(html):
    start = html.index('<p class="lead">') + len('<p class="lead">')
    return html[start:html.index("</p>", start)]


def test_failures_report_holds_the_figures_of_failures_json(tmp_path, capsys):
    page, html, d = _page_and_json(capsys, tmp_path, "failures")
    assert "fig-failures" in page.ids
    rows = page.tables["t-failures"]["rows"]
    # the intact network first, then the failures worst first, as --json lists them
    assert [r["id"] for r in rows] == ["intact", *[f["element"] for f in d["failures"]]]
    worst = page.column("t-failures", "worst blocking")
    mean = page.column("t-failures", "mean blocking")
    over = page.column("t-failures", "over target")
    verdict = page.column("t-failures", "verdict")
    for key, rec in [("intact", d["intact"]), *[(f["element"], f) for f in d["failures"]]]:
        assert _value(worst[key]) == rec["worst_blocking"]
        assert _value(mean[key]) == rec["mean_blocking"]
        assert _value(over[key]) == len(rec["over_target"])
        assert verdict[key]["attrs"]["class"] == f"v-{rec['verdict']}"
    verdicts = [f["verdict"] for f in d["failures"]]
    assert _lead(html).startswith(
        f"{d['survivors']} of {d['count']} single failures survived, judged against each "
        f"demand&#x27;s own target ({verdicts.count('met')} survive, "
        f"{verdicts.count('missed')} fail, {verdicts.count('unclear')} unclear).")
    assert "met" not in _lead(html).split()


def test_headroom_report_holds_the_figures_of_headroom_json(tmp_path, capsys):
    page, html, d = _page_and_json(capsys, tmp_path, "headroom")
    assert "fig-headroom" in page.ids
    holds = page.column("t-headroom", "holds at (x today)")
    fails = page.column("t-headroom", "fails at (x today)")
    first = page.column("t-headroom", "fails first")
    assert list(holds) == ["all", *[h["scope"] for h in d["demands"]]]
    assert _value(holds["all"]) == d["multiplier"]
    assert _value(fails["all"]) == d["above"]
    assert first["all"]["text"] == d["fails_first"]
    for h in d["demands"]:
        assert _value(holds[h["scope"]]) == h["multiplier"]
        assert _value(fails[h["scope"]]) == h["above"]
        assert first[h["scope"]]["text"] == h["fails_first"]
    assert d["multiplier"] >= 1  # so the lead says the targets hold
    assert _lead(html) == (f"Every target holds at {d['multiplier']:.4f} times today&#x27;s "
                           f"traffic (every demand grown together) and some fails at "
                           f"{d['above']:.4f} times; {d['fails_first']} fails first.")


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_growth_report_holds_the_figures_of_growth_json(tmp_path, capsys):
    page, html, d = _page_and_json(capsys, tmp_path, "growth", GROWTH)
    assert "fig-growth" in page.ids
    years = {str(y["year"]): y for y in d["years"]}
    assert [r["id"] for r in page.tables["t-growth"]["rows"]] == list(years)
    for header, key in (("offered (E)", "offered"), ("capacity (units)", "capacity"),
                        ("cost", "cost"), ("worst blocking", "worst_blocking"),
                        ("gap (%)", "gap")):
        cells = page.column("t-growth", header)
        for y, rec in years.items():
            assert _value(cells[y]) == rec[key], (header, y)
    verdict = page.column("t-growth", "targets")
    assert all(verdict[y]["text"] == rec["verdict"] for y, rec in years.items())
    assert sum(rec["cost"] for rec in years.values()) == d["total_cost"]
    assert any(rec["cost"] > 0 for rec in years.values())  # the run did buy something
    links = {rec["id"]: rec for rec in d["links"]}
    start = page.column("t-growth-links", "start")
    nxt = page.column("t-growth-links", "next module")
    assert list(start) == list(links)
    for k, y in enumerate(years):
        cells = page.column("t-growth-links", f"year {y}")
        assert {lid: int(_value(c)) for lid, c in cells.items()} == \
            {lid: rec["capacity"][k] for lid, rec in links.items()}
    for lid, rec in links.items():
        assert int(_value(start[lid])) == rec["start"]
        want = rec["next_module_year"]
        assert nxt[lid]["text"] == ("-" if want is None else str(want))
    met = [rec["verdict"] for rec in years.values()].count("met")
    assert _lead(html).startswith(f"{met} of {len(years)} years of the growth plan meet "
                                  "every target")


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_compare_report_holds_the_figures_of_compare_json(tmp_path, capsys):
    page, html, d = _page_and_json(capsys, tmp_path, "compare", COMPARE)
    assert "fig-compare" in page.ids
    designs = {r["name"]: r for r in d["designs"]}
    assert list(page.column("t-compare", "cost")) == list(designs) == ["three-villages",
                                                                       "mesh"]
    for header, key in (("cost", "cost"), ("capacity (units)", "capacity"),
                        ("links built", "links_built"), ("worst blocking", "worst_blocking"),
                        ("mean blocking", "mean_blocking"), ("cost per erlang",
                                                             "cost_per_erlang"),
                        ("gap (%)", "gap")):
        cells = page.column("t-compare", header)
        for name, rec in designs.items():
            assert _value(cells[name]) == rec[key], (header, name)
    verdict = page.column("t-compare", "targets")
    assert all(verdict[n]["text"] == rec["verdict"] for n, rec in designs.items())
    # --no-failures: no failure figure is shown
    assert {c["text"] for c in page.column("t-compare", "worst failure blocking").values()} \
        == {"-"}
    lead = _lead(html)
    if d["cheapest"]:
        assert f"the cheapest of them is {d['cheapest']} at cost " in lead
    else:
        assert "none of them meets every target" in lead


# -- what a study's report may write over ------------------------------------------------------
@pytest.mark.parametrize("command,extra", [("failures", []), ("headroom", []),
                                           ("growth", GROWTH), ("compare", COMPARE)])
def test_a_study_report_never_replaces_its_input(command, extra, tmp_path, capsys):
    src = tmp_path / "net.yaml"
    src.write_text(pathlib.Path(VILLAGES).read_text())
    text = src.read_text()
    assert main([command, str(src), *extra, "--report", str(src), "--force"]) == 2
    assert capsys.readouterr().err == (
        f"netdim: error: {src}: is the input file; the report would replace it (write the "
        "report to another file)\n")
    assert src.read_text() == text


def test_compare_report_never_replaces_any_of_its_inputs(tmp_path, capsys):
    other = tmp_path / "other.yaml"
    other.write_text(pathlib.Path(VILLAGES).read_text())
    assert main(["compare", VILLAGES, str(other), "--report", str(other), "--force"]) == 2
    assert "is the input file" in capsys.readouterr().err
    assert other.read_text() == pathlib.Path(VILLAGES).read_text()


def test_a_study_report_replaces_a_report_and_another_file_only_with_force(tmp_path, capsys):
    mine = tmp_path / "notes.html"
    mine.write_text("my notes\n")
    assert main(["headroom", VILLAGES, "--quiet", "--report", str(mine)]) == 2
    assert capsys.readouterr().err == (
        f"netdim: error: {mine}: exists and is not a netdim report; refused to write over it "
        "(choose another name, or add --force to replace it)\n")
    assert mine.read_text() == "my notes\n"
    assert main(["headroom", VILLAGES, "--quiet", "--report", str(mine), "--force"]) == 0
    assert is_report(mine)
    before = mine.read_text()
    # now an earlier report: replaced without --force (telephone words this time)
    assert main(["headroom", VILLAGES, "--quiet", "--report", str(mine), "--kind",
                 "telephone"]) == 0
    capsys.readouterr()
    assert mine.read_text() != before and "Capacity kept for emergency calls" in \
        mine.read_text()


def test_study_report_errors(tmp_path, capsys):
    missing = tmp_path / "no-such-dir" / "r.html"
    # checked before the work: growth without --rate names the report, not the rate
    assert main(["growth", VILLAGES, "--report", str(missing)]) == 2
    assert capsys.readouterr().err == (f"netdim: error: {missing.parent}: cannot write the "
                                       "report: no such directory\n")
    csv_dir = tmp_path / "csv"
    assert main(["failures", VILLAGES, "--csv", str(csv_dir), "--report", str(csv_dir)]) == 2
    assert capsys.readouterr().err == (f"netdim: error: {csv_dir}: is also written by this "
                                       "run; the report needs a file of its own\n")
    assert not csv_dir.exists()
    with pytest.raises(SystemExit) as exc:
        main(["headroom", VILLAGES, "--report", "r.html", "--kind", "road"])
    assert exc.value.code == 2
    assert "argument --kind: invalid choice: 'road'" in capsys.readouterr().err


def test_headroom_page_says_a_target_already_fails_only_when_it_does():
    # The three villages with every demand's traffic doubled: the study's own search puts the
    # uniform multiplier below 1, and the lead must say a target fails today, not that it holds.
    net = netdim.read_network(VILLAGES)
    doubled = dataclasses.replace(net, demands=tuple(
        dataclasses.replace(d, traffic=2 * d.traffic) for d in net.demands))
    study = headroom_study(doubled, per_demand=False)
    u = study.uniform
    assert u.multiplier < 1  # what the search found, not assumed
    page = headroom_page(study)
    assert page.lead == (f"Some target already fails at today's traffic: targets hold only "
                         f"up to {u.multiplier:.4f} times it; {u.fails_first} fails first.")
    # without the per-demand searches the chart still shows every demand grown together
    assert [s.id for s in page.sections] == ["headroom", "headroom-table"]
    assert "every demand together" in page.sections[1].body

"""The HTML report from the command line: ``netdim report``, ``--report`` on evaluate and
size, the rules on what a report may write over, and the errors.

Outside reference: the page's tables are parsed back (the standard library's html.parser,
tests/test_report_html.py's ``Page``) and compared with the ``--json`` output of the same run
(the JSON contract), cell by cell. The bundled networks are demo data: the figures checked
are whatever the run produced, never hard-coded.
"""

from __future__ import annotations

import json
import os
import pathlib

import pytest

pytest.importorskip("matplotlib")

from test_report_html import Page, page_text

from netdim.cli import main
from netdim.errors import NetdimError
from netdim.report import figures
from netdim.report.page import is_report

NETWORKS = pathlib.Path(__file__).parent.parent / "networks"
BUNDLED = ["regional-telephone.yaml", "campus-parking.yaml", "three-villages.yaml"]


def _json(capsys, argv):
    status = main(argv)
    return status, json.loads(capsys.readouterr().out)


def _read(path):
    return pathlib.Path(path).read_text(encoding="utf-8")


@pytest.mark.parametrize("name", BUNDLED)
def test_report_holds_the_figures_of_evaluate_json(name, tmp_path, capsys):
    net = str(NETWORKS / name)
    out = tmp_path / "r.html"
    status = main(["report", net, "-o", str(out)])
    said = capsys.readouterr().out
    ev_status, d = _json(capsys, ["evaluate", net, "--json"])
    assert status == ev_status
    assert said.startswith(f"{out}: ")
    page = Page(_read(out))
    blocking = page.column("t-demands", "blocking")
    target = page.column("t-demands", "target")
    verdict = page.column("t-demands", "verdict")
    assert set(blocking) == {r["id"] for r in d["demands"]}
    for rec in d["demands"]:
        assert float(blocking[rec["id"]]["attrs"]["data-value"]) == rec["blocking"]
        assert float(target[rec["id"]]["attrs"]["data-value"]) == rec["target"]
        assert verdict[rec["id"]]["text"] == rec["verdict"]
    head = page.tables["t-links"]["head"]
    cap = page.column("t-links", next(h for h in head if h.startswith("capacity (")))
    util = page.column("t-links", "utilisation (%)")
    for rec in d["links"]:
        assert int(cap[rec["id"]]["attrs"]["data-value"]) == rec["capacity"]
        assert float(util[rec["id"]]["attrs"]["data-value"]) == rec["utilisation"]
    assert os.stat(out).st_mode & 0o777 == 0o644 & ~_umask()


def _umask():
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


@pytest.mark.slow  # about a second: out of the quick round (issue 13)
def test_evaluate_report_is_the_report_commands_page(tmp_path, capsys):
    net = str(NETWORKS / "three-villages.yaml")
    a, b = tmp_path / "a.html", tmp_path / "b.html"
    assert main(["report", net, "-o", str(a), "--kind", "telephone"]) == 0
    assert main(["evaluate", net, "--report", str(b), "--kind", "telephone"]) == 0
    assert _read(a) == _read(b)
    assert "Capacity kept for emergency calls" in page_text(_read(a), "cautions")


def test_simulated_report_names_the_seed_and_holds_the_intervals(tmp_path, capsys):
    net = str(NETWORKS / "three-villages.yaml")
    out = tmp_path / "sim.html"
    argv = ["--method", "simulate", "--seed", "5", "--calls", "20000"]
    status = main(["report", net, "-o", str(out), *argv])
    capsys.readouterr()
    ev_status, d = _json(capsys, ["evaluate", net, "--json", *argv])
    assert status == ev_status
    text = _read(out)
    assert "seed 5" in page_text(text, "assumptions")
    page = Page(text)
    header = next(h for h in page.tables["t-demands"]["head"] if h.startswith("blocking ("))
    cells = page.column("t-demands", header)
    for rec in d["demands"]:
        lo, hi = rec["blocking_interval"]
        assert float(cells[rec["id"]]["attrs"]["data-low"]) == lo
        assert float(cells[rec["id"]]["attrs"]["data-high"]) == hi


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_size_report_holds_the_plan_of_size_json(tmp_path, capsys):
    net = str(NETWORKS / "three-villages.yaml")
    out, plan_file = tmp_path / "plan.html", tmp_path / "plan.yaml"
    status = main(["size", net, "--report", str(out), "--out", str(plan_file), "--quiet",
                   "--bound-time", "2"])
    capsys.readouterr()
    assert status == 0 and plan_file.exists()
    _, d = _json(capsys, ["size", net, "--json", "--quiet", "--bound-time", "2"])
    text = _read(out)
    page = Page(text)
    cap = page.column("t-links", "capacity (units)")
    for rec in d["links"]:
        assert int(cap[rec["id"]]["attrs"]["data-value"]) == rec["capacity"]
    assert f"{d['cost']:,.0f}" in page_text(text, "summary")
    # the plan file, reported on its own, is an evaluation of the plan's capacities
    report2 = tmp_path / "plan-file.html"
    assert main(["report", str(plan_file), "-o", str(report2)]) == 0
    cap2 = Page(_read(report2)).column("t-links", "capacity (units)")
    assert {k: c["attrs"]["data-value"] for k, c in cap2.items()} == \
        {k: c["attrs"]["data-value"] for k, c in cap.items()}


# -- what a report may write over --------------------------------------------------------------
@pytest.mark.slow  # about a second: out of the quick round (issue 13)
def test_a_report_replaces_an_earlier_report_but_no_other_file(tmp_path, capsys):
    net = str(NETWORKS / "three-villages.yaml")
    mine = tmp_path / "notes.html"
    mine.write_text("my notes\n")
    assert main(["report", net, "-o", str(mine)]) == 2
    err = capsys.readouterr().err
    assert err == (f"netdim: error: {mine}: exists and is not a netdim report; refused to "
                   "write over it (choose another name, or add --force to replace it)\n")
    assert mine.read_text() == "my notes\n"
    assert main(["evaluate", net, "--report", str(mine)]) == 2
    assert "is not a netdim report" in capsys.readouterr().err
    assert mine.read_text() == "my notes\n"
    # --force replaces it; from then on it is a report, replaced without --force
    assert main(["report", net, "-o", str(mine), "--force"]) == 0
    assert is_report(mine)
    before = _read(mine)
    assert main(["report", net, "-o", str(mine), "--kind", "telephone"]) == 0
    assert _read(mine) != before and is_report(mine)


def test_a_report_never_replaces_its_input_or_another_output(tmp_path, capsys):
    src = tmp_path / "net.yaml"
    src.write_text((NETWORKS / "three-villages.yaml").read_text())
    text = src.read_text()
    for argv in (["report", str(src), "-o", str(src), "--force"],
                 ["evaluate", str(src), "--report", str(src), "--force"],
                 ["size", str(src), "--report", str(src), "--force"]):
        assert main(argv) == 2
        assert capsys.readouterr().err == (
            f"netdim: error: {src}: is the input file; the report would replace it (write "
            "the report to another file)\n")
        assert src.read_text() == text
    plan = tmp_path / "plan.yaml"
    assert main(["size", str(src), "--out", str(plan), "--report", str(plan)]) == 2
    assert capsys.readouterr().err == (f"netdim: error: {plan}: is also written by this run; "
                                       "the report needs a file of its own\n")
    assert not plan.exists()


def test_report_path_errors(tmp_path, capsys):
    net = str(NETWORKS / "three-villages.yaml")
    missing = tmp_path / "no-such-dir" / "r.html"
    assert main(["report", net, "-o", str(missing)]) == 2
    assert capsys.readouterr().err == (f"netdim: error: {missing.parent}: cannot write the "
                                       "report: no such directory\n")
    assert main(["report", net, "-o", str(tmp_path)]) == 2
    assert capsys.readouterr().err == (f"netdim: error: {tmp_path}: is a directory; the "
                                       "report needs a file name (such as report.html)\n")


def test_report_option_errors(tmp_path, capsys):
    net = str(NETWORKS / "three-villages.yaml")
    out = str(tmp_path / "r.html")
    cases = [
        (["report", net, "-o", out, "--seed", "3"],
         "netdim: error: --seed: applies to --method simulate or day-simulate only, not "
         "--method peaked-fixed-point"),
        (["report", net, "-o", out, "--holding-law", "deterministic"],
         "netdim: error: --holding-law: applies to --method simulate only, not --method "
         "peaked-fixed-point"),
        (["report", net, "-o", out, "--curves", "-1"],
         "netdim: error: --curves: must be 0 or more, got -1"),
        (["evaluate", net, "--check", "--report", out],
         "netdim: error: --report: does not apply to --check"),
    ]
    for argv, message in cases:
        assert main(argv) == 2
        assert capsys.readouterr().err == message + "\n"
        assert not os.path.exists(out)
    with pytest.raises(SystemExit) as exc:
        main(["report", net])
    assert exc.value.code == 2
    assert "the following arguments are required: -o/--output" in capsys.readouterr().err


def test_a_failed_write_leaves_the_old_report(tmp_path, capsys, monkeypatch):
    net = str(NETWORKS / "three-villages.yaml")
    out = tmp_path / "r.html"
    assert main(["report", net, "-o", str(out)]) == 0
    before = _read(out)

    def refuse(src, dst):
        raise OSError(28, "No space left on device", str(dst))

    monkeypatch.setattr(os, "replace", refuse)
    assert main(["report", net, "-o", str(out), "--kind", "parking"]) == 2
    assert capsys.readouterr().err.endswith("No space left on device\n")
    assert _read(out) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.html"]


def test_no_matplotlib_is_refused_before_any_work(tmp_path, capsys, monkeypatch):
    def missing():
        raise NetdimError("HTML report: needs matplotlib, which is not installed; install it "
                          "with: pip install 'netdim[report]'")

    monkeypatch.setattr(figures, "_mpl", missing)
    src = str(NETWORKS / "three-villages.yaml")
    plan = tmp_path / "plan.yaml"
    assert main(["size", src, "--out", str(plan), "--report", str(tmp_path / "r.html")]) == 2
    assert capsys.readouterr().err == ("netdim: error: HTML report: needs matplotlib, which "
                                       "is not installed; install it with: pip install "
                                       "'netdim[report]'\n")
    assert not plan.exists()


# -- CSV ----------------------------------------------------------------------------------------
def _csv(path):
    import csv

    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


def _same_number(text, value):
    # plain numbers: no percent sign, no thousands separator, and the very double of the JSON
    assert "%" not in text and "," not in text
    return float(text) == float(value)


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_size_csv_equals_the_json(tmp_path, capsys):
    net = str(NETWORKS / "three-villages.yaml")
    out = tmp_path / "csv"
    argv = ["--quiet", "--bound-time", "2", "--verify", "--verify-calls", "20000", "--seed",
            "3"]
    status, d = _json(capsys, ["size", net, "--json", "--csv", str(out), *argv])
    assert status in (0, 1)
    links = _csv(out / "links.csv")
    assert [r["id"] for r in links] == [r["id"] for r in d["links"]]
    for row, rec in zip(links, d["links"], strict=True):
        for key in ("capacity", "modules", "cost", "utilisation", "baseline_capacity"):
            assert _same_number(row[key], rec[key]), key
    demands = _csv(out / "demands.csv")
    sim = {r["id"]: r for r in d["verification"]["demands"]}
    for row, rec in zip(demands, d["demands"], strict=True):
        assert row["id"] == rec["id"]
        for key in ("offered", "carried", "blocking", "target"):
            assert _same_number(row[key], rec[key]), key
        assert row["met"] == str(rec["met"]).lower() and row["verdict"] == rec["verdict"]
        s = sim[rec["id"]]
        assert _same_number(row["simulated_blocking"], s["blocking"])
        assert _same_number(row["simulated_low"], s["interval"][0])
        assert _same_number(row["simulated_high"], s["interval"][1])
        # met only when the whole interval is at or below the target (the JSON's 'judged'
        # reads the point estimate alone, so the rule is restated here)
        lo, hi = s["interval"]
        want = "met" if hi <= s["target"] else "missed" if lo > s["target"] else "unclear"
        assert row["simulated_verdict"] == want
    for name in ("links.csv", "demands.csv"):
        assert os.stat(out / name).st_mode & 0o777 == 0o644 & ~_umask()


def test_report_csv_equals_evaluate_csv(tmp_path, capsys):
    net = str(NETWORKS / "regional-telephone.yaml")
    assert main(["report", net, "-o", str(tmp_path / "r.html"), "--csv", str(tmp_path / "a")]) \
        == 0
    assert main(["evaluate", net, "--csv", str(tmp_path / "b")]) == 0
    for name in ("demands.csv", "links.csv"):
        assert (tmp_path / "a" / name).read_text() == (tmp_path / "b" / name).read_text()


def test_check_csv_equals_the_json(tmp_path, capsys):
    net = str(NETWORKS / "three-villages.yaml")
    argv = ["evaluate", net, "--check", "--seed", "1", "--calls", "20000"]
    _, d = _json(capsys, [*argv, "--json", "--csv", str(tmp_path)])
    rows = _csv(tmp_path / "comparison.csv")
    assert [r["id"] for r in rows] == [r["id"] for r in d["demands"]]
    for row, rec in zip(rows, d["demands"], strict=True):
        for key in ("target", "fixed_point", "simulated", "exact"):
            assert _same_number(row[key], rec[key]), key
        assert _same_number(row["interval_low"], rec["interval"][0])
        assert _same_number(row["interval_high"], rec["interval"][1])
        assert row["outside"] == str(rec["outside"]).lower()
        assert row["verdict"] == rec["verdict"]
        assert int(row["blocked_calls"]) == rec["blocked_calls"]


def test_a_study_adds_its_sections_through_the_same_helpers(tmp_path):
    # What a study command does with --report: its charts as sections of the evaluation's
    # page, or a page of its own sections; the cautions of its kind close both.
    import argparse

    import netdim
    from netdim.cli.report_cmd import write_evaluation_report, write_sections_report
    from netdim.report.page import chart_section

    chart = chart_section("growth", "Growth by year", figures.growth_chart(
        [2027, 2028], [100.0, 130.0]), "demo chart")
    src = str(NETWORKS / "three-villages.yaml")
    args = argparse.Namespace(report=str(tmp_path / "a.html"), kind="telephone", file=src)
    net = netdim.read_network(src)
    write_evaluation_report(args, net, netdim.evaluate(net), sections=[chart])
    page = Page(_read(tmp_path / "a.html"))
    assert page.ids.index("growth") < page.ids.index("assumptions")
    args.report = str(tmp_path / "b.html")
    write_sections_report(args, "Growth study", [chart], lead="demo")
    text = _read(tmp_path / "b.html")
    ids = Page(text).ids
    assert ids.index("growth") < ids.index("cautions")
    assert "Capacity kept for emergency calls" in page_text(text, "cautions")
    assert is_report(tmp_path / "b.html")


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_cost_against_target_in_the_size_report(tmp_path, capsys):
    # Every demand of the three villages has target 0.02, so the sweep's row at 0.02 is the
    # plan itself (size --json); a looser target never costs more where each plan is the
    # least cost (gap 0: every cheaper plan listed), since a plan meeting the stricter target
    # meets the looser one.
    net = str(NETWORKS / "three-villages.yaml")
    out = tmp_path / "r.html"
    status, d = _json(capsys, ["size", net, "--quiet", "--json", "--report", str(out),
                               "--report-targets", "0.05,0.01,0.02"])
    assert status == 0
    page = Page(_read(out))
    cost = page.column("t-cost-target", "cost")
    gap = page.column("t-cost-target", "gap (%)")
    assert list(cost) == ["0.01", "0.02", "0.05"]
    assert float(cost["0.02"]["attrs"]["data-value"]) == d["cost"]
    values = [float(cost[t]["attrs"]["data-value"]) for t in ("0.01", "0.02", "0.05")]
    assert all(float(gap[t]["attrs"]["data-value"]) == 0 for t in gap)
    assert values == sorted(values, reverse=True)
    assert "fig-cost-target" in page.ids


def test_report_targets_errors(tmp_path, capsys):
    net = str(NETWORKS / "three-villages.yaml")
    out = str(tmp_path / "r.html")
    cases = [
        (["--report-targets", "0.01"], "--report-targets: needs --report FILE.html"),
        (["--report", out, "--report-targets", "0.01,2"],
         "--report-targets: 2 is not a blocking target in (0, 1)"),
        (["--report", out, "--report-targets", "0.01,x"],
         "--report-targets: 'x' is not a number"),
        (["--report", out, "--report-targets", ",".join(["0.01"] * 13)],
         "--report-targets: give 1 to 12 targets, got 13"),
    ]
    for more, message in cases:
        assert main(["size", net, "--quiet", *more]) == 2
        assert capsys.readouterr().err == f"netdim: error: {message}\n"
        assert not os.path.exists(out)


def test_evaluate_csv_equals_the_json(tmp_path, capsys):
    net = str(NETWORKS / "three-villages.yaml")
    argv = ["evaluate", net, "--method", "simulate", "--seed", "2", "--calls", "20000"]
    _, d = _json(capsys, [*argv, "--json", "--csv", str(tmp_path)])
    demands = {r["id"]: r for r in _csv(tmp_path / "demands.csv")}
    assert set(demands) == {r["id"] for r in d["demands"]}
    for rec in d["demands"]:
        row = demands[rec["id"]]
        for key in ("offered", "carried", "blocking", "target"):
            assert _same_number(row[key], rec[key]), key
        assert _same_number(row["blocking_low"], rec["blocking_interval"][0])
        assert _same_number(row["blocking_high"], rec["blocking_interval"][1])
        assert row["verdict"] == rec["verdict"] and row["met"] == str(rec["met"]).lower()
    links = {r["id"]: r for r in _csv(tmp_path / "links.csv")}
    for rec in d["links"]:
        row = links[rec["id"]]
        for key in ("capacity", "offered", "carried", "blocking", "utilisation"):
            assert _same_number(row[key], rec[key]), key

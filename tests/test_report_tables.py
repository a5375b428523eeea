"""The text tables of ``netdim evaluate`` and ``netdim size``: a golden table per bundled
network, one format per column, and every cell read back equal to ``--json``.

Outside references: the ``--json`` output of the same command (the JSON contract), read back
cell by cell at the precision each cell shows; the golden files in tests/data/report/ hold
the layout as reviewed (regenerate with NETDIM_UPDATE_GOLDEN=1 and read the diff). The
networks are demo data: no figure here is a check value of its own.
"""

from __future__ import annotations

import json
import os
import pathlib
import re

import pytest

from netdim.cli import main

ROOT = pathlib.Path(__file__).parent.parent
GOLDEN = pathlib.Path(__file__).parent / "data" / "report"
BUNDLED = ["regional-telephone", "campus-parking", "three-villages"]


def _run(capsys, argv):
    status = main(argv)
    return status, capsys.readouterr().out


def _golden(name, text):
    path = GOLDEN / name
    if os.environ.get("NETDIM_UPDATE_GOLDEN"):
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")
    assert path.exists(), f"no golden file {path}; run with NETDIM_UPDATE_GOLDEN=1"
    assert text == path.read_text(encoding="utf-8")


def tables(text):
    """Every table of a text report: {first header: (headers, units, rows)}; cells split on
    two or more spaces (no cell holds two spaces)."""
    lines = text.splitlines()
    out = {}
    for k, line in enumerate(lines):
        if not re.fullmatch(r"-+(  -+)*", line):
            continue
        widths = [len(x) for x in line.split("  ")]
        head = lines[k - 1] if not lines[k - 1].lstrip().startswith("(") else lines[k - 2]
        units = lines[k - 1] if head is not lines[k - 1] else ""
        rows = []
        for row in lines[k + 1:]:
            if not row or row.startswith(("  ", "...")):
                break
            rows.append(re.split(r" {2,}", row.strip()))
        assert all(len(r) == len(widths) for r in rows), (head, rows[:2])
        out[head.split()[0]] = (head.split(), units, rows)
    return out


def _shape(cell):
    return re.sub(r"\d", "9", cell.split(" (")[0])


def _check_formats(text):
    for title, (head, _, rows) in tables(text).items():
        for k in range(1, len(head)):
            shapes = {_shape(r[k]).lstrip("9") for r in rows if r[k] not in ("0", "n/a")}
            assert len(shapes) <= 1, (title, head[k], shapes)


def _close(shown, exact):
    """``shown`` is ``exact`` rounded to the digits it shows."""
    text = shown.split(" (")[0]
    if "e" in text:
        mant = text.split("e")[0]
        digits = len(mant.split(".")[1]) if "." in mant else 0
        return abs(float(text) - exact) <= 0.5 * 10.0 ** (int(text.split("e")[1]) - digits) \
            * (1 + 1e-9)
    digits = len(text.split(".")[1]) if "." in text else 0
    return abs(float(text) - exact) <= 0.5 * 10.0**-digits * (1 + 1e-9) + 1e-15


@pytest.mark.parametrize("name", BUNDLED)
def test_evaluate_table_is_golden_and_equals_the_json(name, capsys, monkeypatch):
    monkeypatch.chdir(ROOT)
    path = f"networks/{name}.yaml"
    status, text = _run(capsys, ["evaluate", path])
    _golden(f"evaluate-{name}.txt", text)
    _check_formats(text)
    _, js = _run(capsys, ["evaluate", path, "--json"])
    d = json.loads(js)
    t = tables(text)
    head, _, rows = t["demand"]
    demands = {r["id"]: r for r in d["demands"]}
    assert [r[0] for r in rows] == sorted(demands, key=lambda i: (
        {"missed": 0, "unclear": 1, "met": 2}[demands[i]["verdict"]],
        -demands[i]["blocking"] / demands[i]["target"]))
    for r in rows:
        rec = demands[r[0]]
        cell = dict(zip(head, r, strict=True))
        assert _close(cell["offered"], rec["offered"])
        assert _close(cell["blocking"], rec["blocking"]), (r, rec)
        assert _close(cell["target"], rec["target"])
        assert cell["verdict"] == {"met": "met", "missed": "MISSED",
                                   "unclear": "unclear"}[rec["verdict"]]
    head, units, rows = t["link"]
    links = {r["id"]: r for r in d["links"]}
    for r in rows:
        rec = links[r[0]]
        assert int(r[1]) == rec["capacity"]
        assert _close(r[2], rec["offered"]) and _close(r[3], rec["carried"])
        assert _close(r[4], rec["blocking"])
        assert _close(r[-1], 100 * rec["utilisation"])
        assert "%" not in r[-1]
    assert status == (0 if all(r["verdict"] == "met" for r in d["demands"]) else 1)


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_size_table_is_golden_and_equals_the_json(capsys, monkeypatch):
    monkeypatch.chdir(ROOT)
    path = "networks/three-villages.yaml"
    # time enough for the listing of cheaper plans to end on a slow machine: the bound (and
    # the status it gives) must not depend on the machine's speed
    argv = ["size", path, "--quiet", "--bound-time", "600"]
    status, text = _run(capsys, argv)
    assert status == 0
    # the time taken differs from run to run
    steady = re.sub(r"(?m)^time +\S+ s.*$", "time           T s", text)
    _golden("size-three-villages.txt", steady)
    _check_formats(text)
    _, js = _run(capsys, [*argv, "--json"])
    d = json.loads(js)
    t = tables(text)
    head, units, rows = t["link"]
    assert head == ["link", "capacity", "modules", "cost", "utilisation", "baseline"]
    links = {r["id"]: r for r in d["links"]}
    for r in rows:
        rec = links[r[0]]
        assert [int(r[1]), int(r[2]), int(r[5])] == [rec["capacity"], rec["modules"],
                                                     rec["baseline_capacity"]]
        assert _close(r[3], rec["cost"]) and _close(r[4], 100 * rec["utilisation"])
    totals = dict(re.findall(r"(?m)^(total cost|lower bound|baseline cost) +(\S+)", text))
    assert _close(totals["total cost"], d["cost"])
    assert _close(totals["lower bound"], d["lower_bound"])
    assert _close(totals["baseline cost"], d["baseline_cost"])
    assert f"gap            {100 * d['gap']:.1f}%" in text
    assert f"({100 * d['saving']:.1f}% of the baseline cost)" in text


@pytest.mark.parametrize("kind, words", [
    # the descriptions netdim.dimension gives its bounds (Plan.details['bound'])
    ("MILP at least thinned loads A(1 - t)", "less all the loss their targets allow"),
    ("MILP at least thinned loads A(1 - t), 3 of 4 choices of links to build solved",
     "allow, A(1 - t), 3 of 4 choices of links to build solved"),
    ("MILP at un-thinned loads", "whole traffic"),
    ("loss-flow LP (9 rounds, 68 cuts)", "(9 rounds, 68 cutting planes)"),
    ("loss-flow MILP (9 LP and 3 MILP rounds, 188 cuts)",
     "in whole modules (9 LP and 3 MILP rounds, 188 cuts)"),
    ("least cost: every cheaper plan listed and evaluated",
     "least cost: every cheaper plan listed and evaluated"),
])
def test_bounds_are_named_in_plain_words(kind, words):
    from netdim.report.words import bound_plain

    text = bound_plain(kind)
    assert words in text
    assert not text.startswith(("MILP", "loss-flow"))


@pytest.mark.parametrize("kind", ["telephone", "parking"])
@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_text_caution_follows_the_kind(kind, capsys):
    # The caution a planner's figures rest on: emergency-call capacity for trunk groups,
    # parking provision and accessible spaces for car parks, follow local codes and licensed
    # practice (common practice, no source).
    from netdim.report.text import CAUTION, caution_for

    net = str(ROOT / "networks" / "three-villages.yaml")
    for argv in (["evaluate", net], ["evaluate", net, "--check", "--seed", "1", "--calls",
                                     "5000"], ["size", net, "--quiet"]):
        main([*argv, "--kind", kind])
        out = capsys.readouterr().out
        assert out.rstrip().endswith(caution_for(kind)), argv
        assert CAUTION not in out
    assert ("emergency" in caution_for(kind)) == (kind == "telephone")
    assert ("accessible" in caution_for(kind)) == (kind == "parking")
    with pytest.raises(ValueError, match="kind: unknown kind 'road'"):
        caution_for("road")

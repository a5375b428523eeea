"""Tests of ``netdim evaluate`` (the command line over the fixed-point evaluator)."""

from __future__ import annotations

import csv
import json

import pytest

from netdim.cli import main
from netdim.report.text import CAUTION


def erlang_b_ref(a, c):
    """Erlang B recursion (ITU-T E.521; common practice)."""
    e = 1.0
    for n in range(1, c + 1):
        e = a * e / (n + a * e)
    return e


ONE_LINK = """\
name: One trunk group
sites:
  - {id: EAST}
  - {id: WEST}
links:
  - {id: E-W, ends: [EAST, WEST], capacity: CAP}
demands:
  - {id: EW, between: [EAST, WEST], traffic: 5.0, target: 0.02}
"""

TWO_DEMANDS = """\
name: Two routes
sites:
  - {id: AMBER}
  - {id: BIRCH}
  - {id: CEDAR}
links:
  - {id: A-B, ends: [AMBER, BIRCH], capacity: 10}
  - {id: B-C, ends: [BIRCH, CEDAR], capacity: 4}
demands:
  - {id: AB, between: [AMBER, BIRCH], traffic: 3.0, target: 0.01}
  - {id: BC, between: [BIRCH, CEDAR], traffic: 3.0, target: 0.01}
"""


def write(tmp_path, text, name="net.yaml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return str(p)


def test_text_report_met(tmp_path, capsys):
    # Source: E(5, 10) = 0.01838 by the Erlang B recursion (ITU-T E.521): target 0.02 met.
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert main(["evaluate", path]) == 0
    out = capsys.readouterr().out
    assert "EW" in out and "E-W" in out
    assert f"{erlang_b_ref(5.0, 10):.5f}" in out
    assert out.rstrip().endswith(CAUTION)


def test_exit_1_names_unmet(tmp_path, capsys):
    # Source: E(5, 8) = 0.0700 > 0.02 (Erlang B recursion, ITU-T E.521).
    path = write(tmp_path, ONE_LINK.replace("CAP", "8"))
    assert main(["evaluate", path]) == 1
    captured = capsys.readouterr()
    err = captured.err.strip().splitlines()
    assert len(err) == 1 and "EW" in err[0] and "1 of 1" in err[0]
    assert "NO" in captured.out


def test_worst_first(tmp_path, capsys):
    # Source: E(3, 4) = 0.2061 > E(3, 10) = 0.0008 (Erlang B recursion, ITU-T E.521): the
    # B-C demand and link come first.
    path = write(tmp_path, TWO_DEMANDS)
    assert main(["evaluate", path]) == 1
    out = capsys.readouterr().out
    demands = out[out.index("Demands"):out.index("Links")]
    links = out[out.index("Links"):]
    assert demands.index("BC") < demands.index("AB")
    assert links.index("B-C") < links.index("A-B")


def test_json_contract(tmp_path, capsys):
    # Source: Erlang B recursion (ITU-T E.521) for the value; keys from the contract.
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert main(["evaluate", path, "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    for key in ("demands", "links", "method", "iterations", "residual", "warnings"):
        assert key in data
    d = data["demands"][0]
    assert set(d) >= {"id", "offered", "carried", "blocking", "target", "met"}
    assert d["blocking"] == pytest.approx(erlang_b_ref(5.0, 10), rel=1e-10)
    assert d["carried"] == pytest.approx(5.0 * (1 - erlang_b_ref(5.0, 10)), rel=1e-10)
    link = data["links"][0]
    assert set(link) >= {"id", "capacity", "offered", "carried", "blocking", "utilisation"}
    assert link["utilisation"] == pytest.approx(link["carried"] / 10)
    assert data["method"] == "fixed-point"


def test_conservative_flag(tmp_path, capsys):
    # Source: product bound (Whitt 1985): on one link it equals Erlang B of the load.
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert main(["evaluate", path, "--conservative", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["method"] == "conservative"
    assert data["demands"][0]["blocking"] == pytest.approx(erlang_b_ref(5.0, 10), rel=1e-10)


def test_csv_files(tmp_path, capsys):
    # Source: Erlang B recursion (ITU-T E.521); files read back with the csv module.
    path = write(tmp_path, TWO_DEMANDS)
    out_dir = tmp_path / "out" / "nested"
    assert main(["evaluate", path, "--csv", str(out_dir)]) == 1
    with open(out_dir / "demands.csv", newline="") as f:
        rows = list(csv.DictReader(f))
    assert [r["id"] for r in rows] == ["BC", "AB"]
    assert float(rows[0]["blocking"]) == pytest.approx(erlang_b_ref(3.0, 4), rel=1e-10)
    assert rows[0]["met"] == "false" and rows[1]["met"] == "true"
    with open(out_dir / "links.csv", newline="") as f:
        links = list(csv.DictReader(f))
    assert {r["id"] for r in links} == {"A-B", "B-C"}
    assert set(links[0]) >= {"id", "capacity", "offered", "carried", "blocking", "utilisation"}
    assert not [p for p in out_dir.iterdir() if p.name.startswith(".netdim-")]


def test_csv_dir_is_a_file(tmp_path, capsys):
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    blocker = tmp_path / "taken"
    blocker.write_text("x")
    assert main(["evaluate", path, "--csv", str(blocker)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "taken" in err


def test_missing_file(tmp_path, capsys):
    assert main(["evaluate", str(tmp_path / "nowhere.yaml")]) == 2
    err = capsys.readouterr().err
    assert "nowhere.yaml" in err and "cannot read" in err


def test_option_for_other_method(tmp_path, capsys):
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert main(["evaluate", path, "--seed", "3"]) == 2
    assert "--seed: applies to --method simulate only" in capsys.readouterr().err
    assert main(["evaluate", path, "--conservative", "--method", "exact"]) == 2
    assert "--conservative: conflicts with --method exact" in capsys.readouterr().err
    assert main(["evaluate", path, "--check", "--method", "exact"]) == 2
    assert "--check: compares the methods itself" in capsys.readouterr().err


def test_bad_method_name(tmp_path, capsys):
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    with pytest.raises(SystemExit) as ei:
        main(["evaluate", path, "--method", "guess"])
    assert ei.value.code == 2
    assert "invalid choice" in capsys.readouterr().err


def test_no_convergence_is_exit_3(tmp_path, capsys):
    # Source: common practice, no source (a solver stopped early is an error, not a result,
    # and not bad input either: README gives it exit status 3).
    # a through demand over both links needs more than one sweep
    chain = TWO_DEMANDS + "  - {id: AC, between: [AMBER, CEDAR], traffic: 3.0, " \
        "routes: [[A-B, B-C]]}\n"
    path = write(tmp_path, chain, "chain.yaml")
    assert main(["evaluate", path, "--max-iter", "1"]) == 3
    err = capsys.readouterr().err
    assert "did not converge in 1 iterations" in err and err.count("\n") == 1


def test_check_json(tmp_path, capsys):
    # Source: E(5, 10) = 0.01838 (Erlang B recursion, ITU-T E.521): the fixed point and the
    # exact method both give it on one link; the simulation only has to run.
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert main(["evaluate", path, "--check", "--json", "--seed", "1", "--calls", "20000",
                 "--quiet"]) == 0
    data = json.loads(capsys.readouterr().out)
    d = data["demands"][0]
    assert d["fixed_point"] == pytest.approx(erlang_b_ref(5.0, 10), rel=1e-10)
    assert d["exact"] == pytest.approx(erlang_b_ref(5.0, 10), rel=1e-8)
    assert main(["evaluate", path, "--check", "--tol", "1e-6"]) == 2
    assert "--tol: does not apply to --check" in capsys.readouterr().err


def test_bistable_network_reports_both(tmp_path, capsys):
    # Source: Gibbens, Hunt and Kelly 1990 (bistability under alternate routing without
    # reservation); the case (6 sites, 30 circuits, 22.2 E per pair, 4 two-link alternates)
    # was computed for tests/test_fixed_point.py.
    import itertools
    names = ["ALDER", "BEECH", "CEDAR", "DOGWOOD", "ELM", "FIR"]
    lines = ["name: Six exchanges", "sites:"] + [f"  - {{id: {n}}}" for n in names]
    lines.append("links:")
    for a, b in itertools.combinations(names, 2):
        lines.append(f"  - {{id: {a}-{b}, ends: [{a}, {b}], capacity: 30}}")
    lines.append("demands:")
    for i, j in itertools.combinations(range(6), 2):
        a, b = names[i], names[j]
        routes = [f"[{a}-{b}]"]
        for k in [k for k in range(6) if k not in (i, j)]:
            first = "-".join(sorted([a, names[k]], key=names.index))
            second = "-".join(sorted([names[k], b], key=names.index))
            routes.append(f"[{first}, {second}]")
        lines.append(f"  - {{between: [{a}, {b}], traffic: 22.2, routes: [{', '.join(routes)}]}}")
    lines.append("routing: {policy: alternate, reservation: 0}")
    path = write(tmp_path, "\n".join(lines) + "\n")
    main(["evaluate", path])
    out = capsys.readouterr().out
    assert "status: bistable" in out
    assert "two solutions" in out and "second solution" in out

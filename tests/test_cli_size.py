"""`netdim size`: exit status, output, JSON contract and --out, on small files written here.

Reference values: the least cost of the line network A-B-C (118 under the fixed point) comes
from the exhaustive search in tests/test_dimension.py (line_search over line_fixed_point),
which agrees with the value the issue's author computed with independent code.
"""

from __future__ import annotations

import json

import pytest

from netdim.cli import main


@pytest.fixture
def line_file(tmp_path, line_yaml):
    p = tmp_path / "line.yaml"
    p.write_text(line_yaml())
    return p


def test_size_text_report(line_file, capsys):
    assert main(["size", str(line_file), "--quiet"]) == 0
    out = capsys.readouterr().out
    assert "total cost     118" in out  # exhaustive search, tests/test_dimension.py
    assert "lower bound" in out and "baseline cost" in out and "saving" in out
    from netdim.report.text import CAUTION

    assert out.rstrip().endswith(CAUTION)


def test_size_json_and_out_checks_under_evaluate(line_file, tmp_path, capsys):
    plan_path = tmp_path / "plan.yaml"
    assert main(["size", str(line_file), "--json", "--out", str(plan_path)]) == 0
    captured = capsys.readouterr()
    d = json.loads(captured.out)
    assert d["cost"] == pytest.approx(118)  # exhaustive search, tests/test_dimension.py
    for key in ("cost", "lower_bound", "gap", "links", "demands", "status", "baseline_cost"):
        assert key in d
    assert "iteration" in captured.err  # progress lines go to stderr
    from netdim.evaluate import evaluate
    from netdim.netfile import read_network

    net = read_network(plan_path)
    caps = [link.capacity for link in net.links]
    assert caps == [link["capacity"] for link in d["links"]]
    assert evaluate(net).all_met


def test_size_cbc_and_conservative(line_file, capsys):
    assert main(["size", str(line_file), "--solver", "cbc", "--json", "--quiet"]) == 0
    assert json.loads(capsys.readouterr().out)["cost"] == pytest.approx(118)
    assert main(["size", str(line_file), "--model", "conservative", "--json", "--quiet"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["model"] == "conservative" and d["gap"] == pytest.approx(0, abs=1e-6)


def test_size_infeasible_exits_1_naming_the_demand(line_yaml, tmp_path, capsys):
    p = tmp_path / "tight.yaml"
    p.write_text(line_yaml(", max_capacity: 30"))
    assert main(["size", str(p), "--quiet"]) == 1
    captured = capsys.readouterr()
    assert "targets not met for AB" in captured.err
    assert "status infeasible" in captured.out  # the best plan is still shown


def test_size_bad_input_exits_2(tmp_path, line_file, capsys):
    assert main(["size", str(tmp_path / "missing.yaml")]) == 2
    assert "missing.yaml" in capsys.readouterr().err
    with pytest.raises(SystemExit) as exc:
        main(["size", str(line_file), "--solver", "gurobi"])
    assert exc.value.code == 2
    assert "invalid choice: 'gurobi'" in capsys.readouterr().err
    assert main(["size", str(line_file), "--gap", "2"]) == 2
    assert "--gap: must lie in [0, 1)" in capsys.readouterr().err
    assert main(["size", str(line_file), "--time-limit", "-1"]) == 2
    assert "--time-limit: must be > 0" in capsys.readouterr().err


def test_size_json_saving_fraction_and_objective(line_file, capsys):
    # saving is a fraction (the text prints it as a percentage); saving_fraction says so
    assert main(["size", str(line_file), "--json", "--quiet"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["saving_fraction"] == d["saving"]
    assert d["saving"] == pytest.approx((d["baseline_cost"] - d["cost"]) / d["baseline_cost"])
    assert d["objective"] == "cost"
    # the plan's demand records carry the evaluation's keys (keys only added)
    assert set(d["demands"][0]) >= {"id", "blocking", "target", "met", "offered", "carried",
                                    "verdict"}


def test_net_value_is_an_explicit_choice(line_yaml, tmp_path, capsys):
    # Every demand has a value: without --objective the plan still meets the targets (the
    # least cost 118 of the line network, exhaustive search in tests/test_dimension.py).
    p = tmp_path / "valued.yaml"
    p.write_text(line_yaml().replace("traffic: 20,", "traffic: 20, value: 3,")
                 .replace("traffic: 15,", "traffic: 15, value: 3,")
                 .replace("traffic: 10,", "traffic: 10, value: 6,"))
    assert main(["size", str(p), "--json", "--quiet"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["objective"] == "cost" and d["cost"] == pytest.approx(118)
    assert main(["size", str(p), "--objective", "net-value", "--quiet"]) == 0
    out = capsys.readouterr().out
    assert "sized for net value" in out and "net value gap" in out
    # only what applies: no lower bound on cost, no target or verdict columns
    assert "lower bound" not in out and "target" not in out.split("total cost")[0]
    demand_header = next(line for line in out.splitlines() if line.startswith("demand"))
    assert demand_header.split() == ["demand", "offered", "blocking", "carried", "value"]
    assert main(["size", str(p), "--objective", "net-value", "--json", "--quiet"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["objective"] == "net-value" and d["status"] == "economic"


def test_net_value_needs_every_value(line_file, capsys):
    assert main(["size", str(line_file), "--objective", "net-value", "--quiet"]) == 2
    assert ("objective 'net-value': demands 'AB', 'BC', 'AC' have no value"
            in capsys.readouterr().err)


def test_a_computation_that_does_not_converge_exits_3(line_file, capsys, monkeypatch):
    from netdim.dimension import sizer
    from netdim.errors import ConvergenceError

    def stuck(*args, **kwargs):
        raise ConvergenceError("fixed point: no convergence after 1 iterations", 1, 1.0)

    monkeypatch.setattr(sizer, "evaluate", stuck)
    assert main(["size", str(line_file), "--quiet"]) == 3
    assert "did not converge: fixed point: no convergence" in capsys.readouterr().err


def test_bound_time_help_says_it_is_a_safety_stop(capsys):
    with pytest.raises(SystemExit):
        main(["size", "--help"])
    text = " ".join(capsys.readouterr().out.split())
    assert "safety stop of the lower bound's work" in text
    assert "the bound is the same on any machine" in text
    assert "longer is tighter" not in text

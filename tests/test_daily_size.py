"""Sizing to targets over the day (issue 20): `dimension` and `netdim size` on day profiles.

References computed here: the M(t)/M/c/c chain by ``solve_ivp`` on its forward equations
(``forward_day`` of tests/test_daily_evaluate.py; Feller vol. 1 ch. XVII, from memory) at the
plan's size and one unit below; Erlang B by mpmath (Erlang 1917) for the busy-hour figure.
The issue's worked example: 78 spaces at 1 % in the worst period, 107 by the busy hour.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from netdim.cli import main
from netdim.dimension import dimension
from netdim.evaluate import evaluate
from netdim.netfile import loads_network
from tests.erlang_mpmath import mp_erlang
from tests.test_daily_evaluate import WAVE, forward_day

PARK = (
    "name: park\nsites: [GATE, PARK]\nlinks:\n  - {id: P, ends: [GATE, PARK]}\n"
    "demands:\n  - id: cars\n    between: [GATE, PARK]\n"
    f"    rates: {WAVE}\n    holding: 2\nBASIS"
)


def least_erlang(a, target):
    n = 0
    while mp_erlang(a, n) > target:
        n += 1
    return n


def test_issue_park_sized_to_the_worst_period():
    plan = dimension(loads_network(PARK.replace("BASIS", "")))
    n = int(plan.capacities[0])
    assert n == 78  # the issue: 78 (within 2)
    assert forward_day(WAVE, n, 2.0)[0].max() <= 0.01
    assert forward_day(WAVE, n - 1, 2.0)[0].max() > 0.01
    assert plan.details["busy_hour_cost"] == least_erlang(90.0, 0.01) == 107
    assert plan.lower_bound == 0.0 and "none over the day" in plan.details["bound"]
    assert str(plan.status) == "feasible" and plan.evaluation.all_met
    assert "37.2% more" in plan.message


def test_day_basis():
    plan = dimension(loads_network(PARK.replace("BASIS", "    target_basis: day\n")))
    n = int(plan.capacities[0])
    assert forward_day(WAVE, n, 2.0)[1] <= 0.01 < forward_day(WAVE, n - 1, 2.0)[1]


def test_start_above_the_day_size():
    # 85 cars at the start: the park must hold them (and then the chain from 85 decides)
    plan = dimension(loads_network(PARK.replace("BASIS", "    start: 85\n")))
    n = int(plan.capacities[0])
    assert n >= 85
    assert forward_day(WAVE, n, 2.0, start=85)[0].max() <= 0.01
    if n > 85:
        assert forward_day(WAVE, n - 1, 2.0, start=85)[0].max() > 0.01


def test_module_and_max_capacity_respected():
    text = PARK.replace("BASIS", "").replace("ends: [GATE, PARK]}",
                                             "ends: [GATE, PARK], module: 5, max_capacity: 75}")
    plan = dimension(loads_network(text))
    assert str(plan.status) == "infeasible" and int(plan.capacities[0]) == 75
    assert "targets over the day cannot be met: demand 'cars'" in plan.message
    assert "links P at max_capacity" in plan.message
    text = text.replace("max_capacity: 75", "max_capacity: 200")
    plan = dimension(loads_network(text))
    assert int(plan.capacities[0]) == 80  # least multiple of 5 at or above 78


TANDEM = """\
name: tandem
sites: [A, B, C]
links:
  - {id: AB, ends: [A, B]}
  - {id: BC, ends: [B, C], cost_per_module: 2}
demands:
  - {id: AB, between: [A, B], rates: [4, 8, 12, 8, 4, 2], holding: 1}
  - {id: BC, between: [B, C], rates: [2, 6, 10, 10, 6, 2], holding: 1.5}
  - {id: AC, between: [A, C], rates: [1, 4, 6, 4, 1, 0], holding: 1, routes: [[AB, BC]]}
defaults: {target: 0.02}
"""


def test_network_plan_is_locally_least():
    # the step-down's definition: no link can give up a module and keep every target
    net = loads_network(TANDEM)
    plan = dimension(net)
    assert plan.model == "day-fpa" and plan.evaluation.all_met
    caps = np.asarray(plan.capacities)
    for j in range(2):
        less = caps.copy()
        less[j] -= 1
        assert not evaluate(net, less, method="day-fpa").all_met
    assert any("approximation" in w for w in plan.warnings)


def test_refusals():
    net = loads_network(PARK.replace("BASIS", ""))
    with pytest.raises(ValueError, match=r"^model: 'conservative' has no counterpart over "):
        dimension(net, model="conservative")
    with pytest.raises(ValueError, match=r"^objective: 'net-value' has no counterpart over"):
        dimension(net, objective="net-value")


def test_cli_size_day(tmp_path, capsys):
    path = tmp_path / "park.yaml"
    path.write_text(PARK.replace("BASIS", ""))
    out = tmp_path / "plan.yaml"
    assert main(["size", str(path), "--quiet", "--out", str(out)]) == 0
    text = capsys.readouterr().out
    assert "lower bound    none over the day" in text and "gap " not in text
    assert "busy-hour way  107" in text and "worst period" in text
    assert "capacity: 78" in out.read_text() and "rates: [5, 10, 30" in out.read_text()
    assert main(["size", str(path), "--quiet", "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["lower_bound"] == 0.0 and d["details"]["busy_hour_cost"] == 107.0
    assert d["demands"][0]["peak_period"] == 5
    assert main(["size", str(path), "--quiet", "--objective", "net-value"]) == 2
    assert "objective: 'net-value' has no counterpart" in capsys.readouterr().err


@pytest.mark.slow
def test_verify_simulates_the_day(tmp_path, capsys):
    path = tmp_path / "park.yaml"
    path.write_text(PARK.replace("BASIS", ""))
    assert main(["size", str(path), "--quiet", "--verify", "--verify-calls", "100000",
                 "--json"]) in (0, 1)
    d = json.loads(capsys.readouterr().out)
    v = d["verification"]
    assert v["method"] == "day-simulate" and v["demands"][0]["interval"] is not None
    lo, hi = v["demands"][0]["interval"]
    exact = forward_day(WAVE, 78, 2.0)[0].max()
    assert lo <= exact <= hi


def test_progress_names_every_day_evaluation():
    # common practice, no source: a long search says what it is doing; each evaluation of
    # the day is one numbered line, as many as the plan's count (a plan tried twice is
    # evaluated once)
    net = loads_network(TANDEM)
    lines = []
    plan = dimension(net, progress=lambda f, m: lines.append(m))
    numbers = [int(m.split("evaluation ")[1].split()[0]) for m in lines
               if m.startswith("over the day: evaluation ")]
    assert numbers == list(range(1, plan.details["day_evaluations"] + 1))
    assert any("(taking a module away: link " in m for m in lines)
    assert any("; the last took " in m for m in lines)

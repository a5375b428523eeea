"""Survivable sizing: every single-link failure within the failure target (checked afresh)."""

from __future__ import annotations

import json
import pathlib
import re
from dataclasses import replace

import pytest
from erlang_mpmath import mp_erlang

from netdim.cli import main
from netdim.dimension import dimension
from netdim.evaluate import evaluate
from netdim.model import Demand, Link, Network, Route, Site
from netdim.netfile import read_network
from netdim.studies.survive import survivable_plan

NETWORKS = pathlib.Path(__file__).resolve().parent.parent / "networks"
VILLAGES = NETWORKS / "three-villages.yaml"


def fewest_servers(a, target):
    """Smallest n with E(a, n) <= target (Erlang's formula in mpmath)."""
    n = 0
    while mp_erlang(a, n) > target:
        n += 1
    return n


def test_parallel_groups_are_each_sized_for_the_other_ones_failure():
    # invented: two parallel groups, fixed routing over the first
    net = Network("pair", (Site("A"), Site("B")),
                  (Link("L1", ("A", "B")), Link("L2", ("A", "B"))),
                  (Demand("AB", ("A", "B"), 4.0, target=0.01,
                          routes=(Route((0,), (1.0,)), Route((1,), (1.0,)))),))
    plan = survivable_plan(net, target=0.05)
    # Erlang B in mpmath: L1 carries the demand at 1 %; L2 alone must hold it at 5 %
    assert int(plan.capacities[0]) == fewest_servers(4.0, 0.01)
    assert int(plan.capacities[1]) == fewest_servers(4.0, 0.05)
    assert str(plan.verdict) == "met" and plan.unsurvivable == ()
    assert plan.cost == int(plan.capacities.sum()) and plan.intact_cost == plan.capacities[0]


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_villages_every_failure_within_target_when_evaluated_afresh():
    net = read_network(VILLAGES)
    plan = survivable_plan(net, target=0.05)
    assert str(plan.verdict) == "met"
    intact = dimension(net)
    assert (plan.capacities >= intact.capacities).all()
    assert plan.cost >= plan.lower_bound
    # the fixed point run here on each failed network (routes over the cut link removed)
    assert (evaluate(net, plan.capacities).blocking <= net.demands[0].target * 1.000001).all()
    for j, link in enumerate(net.links):
        demands = tuple(replace(d, routes=tuple(r for r in d.routes if j not in r.links))
                        for d in net.demands)
        caps = plan.capacities.copy()
        caps[j] = 0
        ev = evaluate(replace(net, demands=demands), caps)
        assert (ev.blocking <= 0.05 * (1 + 1e-9)).all(), link.id


def test_a_cut_that_leaves_no_route_is_named_and_not_survivable():
    net = Network("one", (Site("A"), Site("B")), (Link("L", ("A", "B")),),
                  (Demand("AB", ("A", "B"), 1.0, routes=(Route((0,), (1.0,)),)),))
    plan = survivable_plan(net, target=0.05)
    assert plan.unsurvivable == ("L",) and str(plan.verdict) == "missed"
    assert "no capacity helps where a cut leaves a demand with no route: L" in plan.message


@pytest.mark.parametrize("kwargs, match", [
    ({}, r"target: give the blocking every demand must stay within"),
    ({"target": 1.0}, r"target: must lie in \(0, 1\), got 1.0"),
    ({"target": 0.05, "rounds": -1}, r"rounds: must be an integer in 0\.\.100, got -1"),
])
def test_bad_arguments_are_named(kwargs, match):
    net = read_network(VILLAGES)
    with pytest.raises(ValueError, match=match):
        survivable_plan(net, **{"target": None, **kwargs})


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_cli_survive_json_and_out(tmp_path, capsys):
    out = tmp_path / "plan.yaml"
    assert main(["size", str(VILLAGES), "--survive", "5%", "--json", "--quiet",
                 "--out", str(out)]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["all_survive"] is True and d["verdict"] == "met"
    written = read_network(out)
    assert [k.capacity for k in written.links] == [d["capacities"][k.id]
                                                   for k in written.links]
    # the plan file, failed link by link at 5 %, survives every failure
    assert main(["failures", str(out), "--target", "5%", "--quiet"]) == 0


@pytest.mark.parametrize("argv, match", [
    (["--survive", "5"], r"three-villages.yaml: --survive: must lie in \(0, 1\), got 5.0"),
    (["--survive", "5%", "--verify"], r"--survive: cannot be combined with --verify"),
    (["--survive", "5%", "--csv", "out-dir"], r"--survive: cannot be combined with --csv"),
])
def test_cli_errors_are_one_line(argv, match, capsys):
    assert main(["size", str(VILLAGES), *argv]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and re.search(match, err)

"""Sizing with verification by simulation (`dimension(verify='simulate')`, `size --verify`).

Outside references: on the triangle below (alternate routing, small enough for the exact
method), the exact Markov chain of netdim.evaluate.exact (its balance equations are checked
against brute-force enumeration in tests/test_exact.py) is the reference the calibrated plan
must meet, where the fixed-point plan does not. On the campus demo, a fresh simulation with
another seed (a different random stream from the one the calibration used) is the reference.
"""

from __future__ import annotations

import json
import pathlib

import numpy as np
import pytest

from netdim.cli import main
from netdim.dimension import VerifyOptions, dimension
from netdim.evaluate import evaluate
from netdim.model import Demand, Link, Network, Route, Routing, Site
from netdim.report.plan import format_plan


def R(*links):
    return Route(tuple(links), (1.0,) * len(links))


def triangle(traffic=3.0, target=0.02):
    """Three links, each demand direct first and over the other two links second."""
    links = [Link("AB", ("A", "B")), Link("BC", ("B", "C")), Link("AC", ("A", "C"))]
    demands = [Demand("AB", ("A", "B"), traffic, target=target, routes=(R(0), R(2, 1))),
               Demand("BC", ("B", "C"), traffic, target=target, routes=(R(1), R(0, 2))),
               Demand("AC", ("A", "C"), traffic, target=target, routes=(R(2), R(0, 1)))]
    return Network("tri", tuple(Site(s) for s in "ABC"), tuple(links), tuple(demands),
                   routing=Routing(policy="alternate", reservation=0))


@pytest.mark.slow
def test_calibrated_plan_meets_targets_under_the_exact_chain():
    # Reference: netdim.evaluate.exact (the exact CTMC, checked in tests/test_exact.py).
    net = triangle()
    plain = dimension(net)
    assert plain.evaluation.all_met  # under the fixed point
    # The fixed point is optimistic here: the plain plan misses under the exact chain, so
    # the check below can fail.
    assert not evaluate(net, plain.capacities, method="exact").all_met
    plan = dimension(net, verify=VerifyOptions(seed=0))
    assert evaluate(net, plan.capacities, method="exact").all_met
    assert plan.verification is not None and not plan.simulated_misses
    # The plan's own evaluation stays under the model, against the original targets.
    assert plan.evaluation.method == "fixed-point"
    assert np.allclose(plan.evaluation.target, 0.02)
    assert plan.evaluation.all_met
    assert plan.cost >= plain.cost
    # A fresh simulation with another seed (wide 99.9 % intervals) agrees.
    fresh = evaluate(net, plan.capacities, method="simulate", seed=12345, calls=400_000,
                     confidence=0.999)
    assert np.all(fresh.blocking_interval[:, 0] <= fresh.target)


@pytest.mark.slow
def test_campus_demo_verified_plan_meets_targets_in_a_fresh_simulation():
    # Reference: a simulation with a seed the calibration did not use, 99.9 % intervals.
    from pathlib import Path

    from netdim.netfile import read_network

    net = read_network(Path(__file__).parents[1] / "networks" / "campus-parking.yaml")
    plan = dimension(net, verify=VerifyOptions(seed=0))
    assert plan.feasible and not plan.simulated_misses
    fresh = evaluate(plan.network, plan.capacities, method="simulate", seed=987,
                     calls=1_000_000, confidence=0.999)
    assert np.all(fresh.blocking_interval[:, 0] <= fresh.target)
    d = plan.to_dict()["verification"]
    assert {r["id"] for r in d["demands"]} == set(net.demand_ids)
    # met only when the whole interval lies at or below the target
    assert all(r["judged"] in ("met", "unclear") and r["met"] == (r["judged"] == "met")
               and r["interval"][0] <= r["blocking"] <= r["interval"][1]
               for r in d["demands"])
    assert all(r["interval"][1] <= r["target"] for r in d["demands"] if r["met"])


@pytest.mark.slow
def test_rounds_exhausted_returns_feasible_plan_naming_the_misses():
    # No calibration round allowed: the fixed-point plan misses by about 24 % under the
    # exact chain (reference: netdim.evaluate.exact), far outside the noise of 1e6 calls.
    net = triangle()
    plan = dimension(net, verify=VerifyOptions(rounds=0))
    assert plan.status == "feasible"
    assert "still miss" in plan.message
    assert plan.warnings and all("simulation: demand '" in w for w in plan.warnings)
    assert not plan.verification.all_met


def test_unknown_verify_value_lists_the_valid_ones():
    net = triangle()
    with pytest.raises(ValueError, match=r"verify: unknown value 'exactly'; choose one of "
                                         r"none, simulate"):
        dimension(net, verify="exactly")
    with pytest.raises(ValueError, match="verify_calls: must be a positive integer"):
        dimension(net, verify=VerifyOptions(calls=0))
    with pytest.raises(ValueError, match="verify_rounds: must be an integer >= 0"):
        dimension(net, verify=VerifyOptions(rounds=-1))
    with pytest.raises(ValueError, match="verify_restart: unknown value 'cold'"):
        dimension(net, verify=VerifyOptions(restart="cold"))
    with pytest.raises(ValueError, match=r"margin: must lie in \[0, 0.5\], got 0.7"):
        VerifyOptions(margin=0.7)


def test_verify_none_is_no_verification():
    net = triangle()
    plan = dimension(net, verify="none")
    assert plan.verification is None
    assert plan.to_dict()["verification"] is None




@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_cli_verify_json_has_the_verification(line_yaml, tmp_path, capsys):
    # Fixed routing: the fixed-point plan of the line network (least cost 118, see
    # tests/test_dimension.py) also meets its targets under the product form, so the
    # simulation should agree; checked only for the shape of the output here.
    p = tmp_path / "line.yaml"
    p.write_text(line_yaml())
    assert main(["size", str(p), "--verify", "--seed", "3", "--verify-calls", "200000",
                 "--json", "--quiet"]) == 0
    out = json.loads(capsys.readouterr().out)
    v = out["verification"]
    assert v["method"] == "simulate" and v["calls"] >= 200_000
    assert [r["id"] for r in v["demands"]] == ["AB", "BC", "AC"]
    assert set(v["demands"][0]) >= {"id", "blocking", "interval", "target", "met", "judged"}
    assert out["details"]["verify_seed"] == 3
    assert out["details"]["verify_margin"] == 0.2


def test_cli_text_report_shows_simulated_column(line_yaml, tmp_path, capsys):
    p = tmp_path / "line.yaml"
    p.write_text(line_yaml())
    assert main(["size", str(p), "--verify", "--verify-calls", "100000", "--quiet"]) == 0
    out = capsys.readouterr().out
    assert "simulated" in out and "verified       by simulation" in out


def test_cli_notes_verify_for_alternate_routing(line_yaml, tmp_path, capsys):
    p = tmp_path / "alt.yaml"
    p.write_text(line_yaml(tail="routing: {policy: alternate}\n"))
    assert main(["size", str(p)]) == 0
    assert "add --verify" in capsys.readouterr().err


def test_cli_bad_verify_calls_exits_2(line_yaml, tmp_path, capsys):
    p = tmp_path / "line.yaml"
    p.write_text(line_yaml())
    assert main(["size", str(p), "--verify", "--verify-calls", "0"]) == 2
    assert "--verify-calls: must be a positive integer" in capsys.readouterr().err


@pytest.mark.slow
def test_cli_exits_1_when_simulation_still_misses(capsys):
    # The fixed-point plan of the bundled three-village network misses BRY-CLV's 2% target by
    # about 20% under the exact Markov chain (reference: netdim.evaluate.exact, see
    # examples/size_villages.out); with no calibration round the check must say so.
    path = pathlib.Path(__file__).resolve().parent.parent / "networks" / "three-villages.yaml"
    # (the plain model named: the command's default here is the peaked one, whose plan
    # passes, docs/measurements/peaked.md)
    assert main(["size", str(path), "--model", "fixed-point", "--verify", "--verify-rounds",
                 "0", "--quiet"]) == 1
    err = capsys.readouterr().err
    assert "targets not met in simulation for" in err and "BRY-CLV" in err


def test_cli_bad_verify_rounds_exits_2(capsys):
    path = pathlib.Path(__file__).resolve().parent.parent / "networks" / "three-villages.yaml"
    assert main(["size", str(path), "--verify", "--verify-rounds", "-1"]) == 2
    assert "--verify-rounds: must be an integer >= 0, got -1" in capsys.readouterr().err


# -- judging by the confidence interval ------------------------------------------------------
def _erlang_b(a, n):
    # Erlang B by its recursion (Erlang 1917; common practice, no source).
    b = 1.0
    for k in range(1, n + 1):
        b = a * b / (k + a * b)
    return b


def one_link(a=10.0, n=18, margin=1.02):
    """One link, target 2 % above E(a, n): the least capacity is n, and a simulation of it
    cannot tell the blocking from the target within any run netdim makes."""
    t = _erlang_b(a, n) * margin
    return Network("one", (Site("A"), Site("B")), (Link("AB", ("A", "B")),),
                   (Demand("AB", ("A", "B"), a, target=t, routes=(R(0),)),))


def test_verdict_is_met_only_when_the_whole_interval_is_below_the_target():
    # The rule of issue 12: a point estimate at or below the target with the interval
    # reaching above it is unclear, not met.
    net = one_link()
    ev = evaluate(net, [18], method="simulate", seed=0, calls=20_000)
    t = float(ev.target[0])
    from dataclasses import replace

    def at(point, lo, hi):
        return replace(ev, blocking=np.array([point]), blocking_interval=np.array([[lo, hi]]))

    assert list(at(t, t / 2, 2 * t).verdicts()) == ["unclear"]
    assert list(at(0.9 * t, 0.5 * t, 0.99 * t).verdicts()) == ["met"]
    assert list(at(1.1 * t, 0.9 * t, 1.3 * t).verdicts()) == ["unclear"]
    assert list(at(1.1 * t, 1.01 * t, 1.3 * t).verdicts()) == ["missed"]
    assert list(replace(at(1.1 * t, 0, 0), blocking_interval=None).verdicts()) == ["missed"]


def test_unclear_result_is_simulated_longer_not_chased():
    net = one_link()
    # Precondition (so that the test cannot pass vacuously): with seed 1 the first run of
    # 20000 calls has an interval that contains the target.
    first = evaluate(net, [18], method="simulate", seed=1, calls=20_000)
    assert first.blocking_interval[0, 0] <= first.target[0] <= first.blocking_interval[0, 1]
    plan = dimension(net, verify=VerifyOptions(seed=1, calls=20_000, margin=0))
    # The least capacity meeting the target is 18 by Erlang B (recursion above): no
    # calibration round adds a circuit against noise.
    assert _erlang_b(10.0, 17) > net.demands[0].target >= _erlang_b(10.0, 18)
    assert list(plan.capacities) == [18]
    assert plan.details["verify_rounds"] == 0
    assert plan.details["verify_calls_last"] > 20_000
    assert plan.simulated_misses == ()


def test_still_unclear_after_longest_run_is_reported_unclear_not_met():
    net = one_link()
    plan = dimension(net, verify=VerifyOptions(seed=2, calls=20_000, margin=0))
    assert plan.details["verify_calls_last"] == 16 * 20_000
    assert plan.details["verify_unclear"] == ["AB"] and plan.details["verify_missed"] == []
    assert plan.details["verify_met"] == []
    assert plan.status == "optimal-within-gap" and list(plan.capacities) == [18]
    assert any("interval contains the target after 320000 calls (unclear)" in w
               for w in plan.warnings)
    assert "0 met, 1 unclear, 0 missed" in plan.message
    rec = plan.to_dict()["verification"]["demands"][0]
    assert rec["judged"] == "unclear" and rec["met"] is False
    text = format_plan(plan)
    assert "in simulation  0 met, 1 unclear, 0 missed" in text
    row = [line for line in text.splitlines() if line.startswith("AB ")][-1]  # demand AB
    assert row.split()[-2:] == ["yes", "unclear"]  # met under the model, unclear simulated


def test_margin_sizes_inside_the_target_so_the_verdict_is_met():
    # With a margin of 10 % the goal is 0.9 T, below E(10, 18) = T / 1.02 by about 9 %, which
    # the longer runs tell apart: a round adds a circuit (Erlang B recursion above:
    # E(10, 19) = 0.0043 <= 0.95 x 0.9 T), whose blocking lies far enough below the target
    # for the simulation to say met.
    net = one_link()
    t = net.demands[0].target
    assert _erlang_b(10.0, 18) > 0.95 * 0.9 * t >= _erlang_b(10.0, 19)
    plan = dimension(net, verify=VerifyOptions(seed=2, calls=20_000, margin=0.1))
    assert list(plan.capacities) == [19] and plan.details["verify_rounds"] == 1
    assert plan.details["verify_met"] == ["AB"] and plan.details["verify_margin"] == 0.1
    assert plan.details["unverified_cost"] == 18
    assert plan.verification.blocking_interval[0, 1] <= t
    assert plan.to_dict()["verification"]["demands"][0]["met"] is True


def test_cli_exit_0_with_unclear_demands_named(tmp_path, capsys):
    from netdim.netfile import write_network

    p = tmp_path / "one.yaml"
    write_network(one_link(), p)
    assert main(["size", str(p), "--verify", "--seed", "2", "--verify-calls", "20000",
                 "--margin", "0", "--quiet"]) == 0
    cap = capsys.readouterr()
    assert "netdim size: unclear in simulation (interval contains the target): AB" in cap.err
    assert "1 unclear" in cap.out
    assert main(["size", str(p), "--verify", "--margin", "0.9"]) == 2
    assert "--margin: must lie in [0, 0.5], got 0.9" in capsys.readouterr().err

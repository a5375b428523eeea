"""A link of capacity 0 is not built: routes over it take no calls, in every method.

The sizer leaves links unbuilt by taking their routes away; the plan file can only say
capacity 0. Both must give the same figures, or `netdim evaluate` of a written plan would
contradict the verdicts `netdim size` printed.
"""

from __future__ import annotations

import json
import pathlib

import pytest
from erlang_mpmath import mp_erlang as erlang_b_ref

from netdim.cli import main
from netdim.evaluate import evaluate
from netdim.model import Demand, Link, Network, Route, Routing, Site
from netdim.netfile import read_network


def _pair(capacity_x):
    """Two groups between A and B; demand d tries X, then Y with 3 circuits reserved
    against overflow (demo data)."""
    links = (Link("X", ("A", "B"), capacity_x), Link("Y", ("A", "B"), 10))
    demands = (Demand("d", ("A", "B"), 5.0, target=0.05,
                      routes=(Route((0,), (1.0,)), Route((1,), (1.0,)))),)
    return Network("pair", (Site("A"), Site("B")), links, demands,
                   routing=Routing(policy="alternate", reservation=3))


@pytest.mark.parametrize("method", ["fixed-point", "peaked-fixed-point", "exact"])
def test_calls_skip_an_unbuilt_group(method):
    # With X not built, d's calls are first-choice calls on Y: Erlang B E(5, 10) = 0.018385
    # (mpmath reference). Were they overflow calls refused in Y's top 3 states, they would
    # see E(5, 7) = 0.1247 instead.
    got = evaluate(_pair(0), method=method).blocking[0]
    assert got == pytest.approx(erlang_b_ref(5.0, 10), rel=1e-8)
    assert erlang_b_ref(5.0, 7) > 6 * got


def test_simulation_skips_an_unbuilt_group():
    ev = evaluate(_pair(0), method="simulate", calls=200_000, seed=1)
    lo, hi = ev.blocking_interval[0]
    assert lo <= erlang_b_ref(5.0, 10) <= hi  # mpmath reference, as above


def test_a_demand_with_every_route_unbuilt_loses_every_call():
    net = _pair(0)
    ev = evaluate(net, [0, 0])
    assert ev.blocking[0] == 1.0 and ev.verdicts().tolist() == ["missed"]


def test_a_written_plan_evaluates_as_it_was_sized(tmp_path, capsys):
    # The bundled campus network: the sizer leaves the far park and its shuttle unbuilt.
    src = str(pathlib.Path(__file__).resolve().parents[1] / "networks" / "campus-parking.yaml")
    out = tmp_path / "plan.yaml"
    assert main(["size", src, "--out", str(out), "--json", "--quiet"]) == 0
    plan = json.loads(capsys.readouterr().out)
    net = read_network(out)
    ev = evaluate(net, method="peaked-fixed-point")
    by_id = {d["id"]: d for d in plan["demands"]}
    for i, d in enumerate(net.demands):
        assert ev.blocking[i] == pytest.approx(by_id[d.id]["blocking"], rel=1e-6)
    assert ev.all_met

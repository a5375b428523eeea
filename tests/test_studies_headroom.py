"""Headroom: tight multipliers, Erlang B on one link (mpmath), each demand alone."""

from __future__ import annotations

import json
import pathlib
import re
from dataclasses import replace

import mpmath as mp
import pytest
from erlang_mpmath import mp_erlang
from hypothesis import given, settings
from hypothesis import strategies as st

from netdim.cli import main
from netdim.erlang import traffic_for
from netdim.evaluate import evaluate
from netdim.model import Demand, Link, Network, Route, Site
from netdim.netfile import read_network
from netdim.studies.headroom import headroom_study

NETWORKS = pathlib.Path(__file__).resolve().parent.parent / "networks"
VILLAGES = NETWORKS / "three-villages.yaml"
REGIONAL = NETWORKS / "regional-telephone.yaml"


def one_link(n=18, a=10.0, target=0.01):
    return Network("one", (Site("A"), Site("B")), (Link("AB", ("A", "B"), n),),
                   (Demand("AB", ("A", "B"), a, target=target, routes=(Route((0,), (1.0,)),)),))


def mp_traffic_for(n, target):
    """The load at which E(A, n) = target: bisection at 30 digits on Erlang's formula in
    mpmath (E grows with A)."""
    with mp.workdps(30):
        lo, hi = mp.mpf(0), mp.mpf(2 * n + 10)
        for _ in range(120):
            mid = (lo + hi) / 2
            if mp_erlang(mid, n, dps=30) > target:
                hi = mid
            else:
                lo = mid
        return float(lo)


@pytest.mark.parametrize("n, a, target", [(18, 10.0, 0.01), (5, 1.0, 0.02), (60, 55.0, 0.005)])
def test_one_link_headroom_is_the_erlang_b_load_over_the_offered(n, a, target):
    h = headroom_study(one_link(n, a, target), per_demand=False).uniform
    exact = mp_traffic_for(n, target) / a  # mpmath root of E(x, n) = target
    assert h.multiplier <= exact * (1 + 1e-9) <= h.above * (1 + 1e-9)
    assert h.multiplier == pytest.approx(exact, rel=1e-4)
    assert h.multiplier == pytest.approx(traffic_for(n, target) / a, rel=1e-4)
    assert h.fails_first == "AB"


def scaled(net, m, only=None):
    return replace(net, demands=tuple(replace(d, traffic=d.traffic * m)
                                      if only is None or d.id == only else d
                                      for d in net.demands))


@pytest.mark.parametrize("path", [VILLAGES, REGIONAL])
def test_headroom_is_tight_targets_hold_at_it_and_fail_1_percent_above(path):
    net = read_network(path)
    study = headroom_study(net, per_demand=False)
    m = study.uniform.multiplier
    # the fixed point run here, apart from the study
    at = evaluate(scaled(net, m))
    assert (at.blocking <= at.target * (1 + 1e-9)).all()
    above = evaluate(scaled(net, m * 1.01))
    assert (above.blocking > above.target * (1 + 1e-9)).any()
    assert study.uniform.above <= m * (1 + study.tol)
    assert str(study.verdict) == "met" and m > 1


def test_each_demand_alone_holds_at_its_multiplier_and_fails_above():
    net = read_network(VILLAGES)
    study = headroom_study(net)
    assert [h.scope for h in study.per_demand] == list(net.demand_ids)
    for h in study.per_demand:
        at = evaluate(scaled(net, h.multiplier, only=h.scope))
        assert (at.blocking <= at.target * (1 + 1e-9)).all()
        up = evaluate(scaled(net, h.multiplier * 1.01, only=h.scope))
        assert (up.blocking > up.target * (1 + 1e-9)).any()
        # growing one demand alone goes further than growing all together
        assert h.multiplier >= study.uniform.multiplier


def test_a_network_already_over_target_has_headroom_below_1():
    h = headroom_study(one_link(10, 10.0, 0.01), per_demand=False)
    assert h.uniform.multiplier < 1 and str(h.verdict) == "missed"
    # mpmath root of E(x, 10) = 0.01, over 10 E
    assert h.uniform.multiplier == pytest.approx(mp_traffic_for(10, 0.01) / 10.0, rel=1e-4)


def test_pool_gives_the_serial_result():
    net = read_network(VILLAGES)
    assert headroom_study(net, workers=2).to_dict() == headroom_study(net).to_dict()


@pytest.mark.parametrize("kwargs, match", [
    ({"method": "simulate"}, r"method: headroom needs a deterministic method"),
    ({"tol": 0.0}, r"tol: must lie in \(0, 0\.1\], got 0\.0"),
    ({"workers": -1}, r"workers: must be an integer in 1\.\.256"),
    ({"capacities": [1, 2]}, r"capacities: expected 1 values"),
])
def test_bad_arguments_are_named(kwargs, match):
    with pytest.raises(ValueError, match=match):
        headroom_study(one_link(), **kwargs)


def test_cli_json_and_text(capsys):
    assert main(["headroom", str(VILLAGES), "--json", "--quiet"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert set(out) >= {"multiplier", "above", "fails_first", "demands", "tol", "met"}
    assert main(["headroom", str(VILLAGES), "--no-per-demand"]) == 0
    text = capsys.readouterr().out
    assert re.search(r"Every target holds at 1\.29\d+ times today's traffic", text)


def test_cli_over_target_exits_1(tmp_path, capsys):
    path = tmp_path / "tight.yaml"  # invented: 10 circuits for 10 E at 1 %
    path.write_text("name: tight\nsites: [A, B]\nlinks:\n  - {id: AB, ends: [A, B], "
                    "capacity: 10}\ndemands:\n  - {between: [A, B], traffic: 10}\n")
    assert main(["headroom", str(path), "--csv", str(tmp_path / "out")]) == 1
    assert "some target fails at today's traffic (A-B first)" in capsys.readouterr().err
    assert (tmp_path / "out" / "headroom.csv").read_text().startswith("scope,multiplier")


@pytest.mark.parametrize("argv, match", [
    (["--tol", "0.5"], r"three-villages.yaml: --tol: must lie in \(0, 0\.1\], got 0\.5"),
    (["--method", "simulate"], r"invalid choice: 'simulate'"),
])
def test_cli_errors_are_one_line(argv, match, capsys):
    try:
        status = main(["headroom", str(VILLAGES), *argv])
    except SystemExit as exc:
        status = exc.code
    assert status == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and re.search(match, err)


@pytest.mark.parametrize("command", [["failures"], ["headroom"], ["growth", "--start",
                                                                   "capacities",
                                                                   "--rate", "1%"]])
def test_cli_file_without_capacities_names_the_file_and_link(command, tmp_path, capsys):
    path = tmp_path / "bare.yaml"  # invented: a link left to the sizer
    path.write_text("name: bare\nsites: [A, B]\nlinks:\n  - {id: AB, ends: [A, B]}\n"
                    "demands:\n  - {between: [A, B], traffic: 1}\n")
    assert main([command[0], str(path), *command[1:]]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1
    assert re.search(r"bare\.yaml: link 'AB' has no capacity", err)


@settings(max_examples=25, deadline=None)
@given(n=st.integers(1, 80), a=st.floats(0.05, 60.0), target=st.floats(0.001, 0.2))
def test_one_link_headroom_brackets_the_erlang_b_load(n, a, target):
    # Erlang's formula in mpmath: E(m A, n) <= target at the multiplier, > target above it
    h = headroom_study(one_link(n, a, target), per_demand=False).uniform
    assert mp_erlang(h.multiplier * a, n) <= target * (1 + 1e-9)
    assert mp_erlang(h.above * a, n) > target * (1 - 1e-9)
    assert h.above <= h.multiplier * (1 + 1e-4) * (1 + 1e-12)

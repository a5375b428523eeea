"""Growth plans: capacity never falls, every year meets its targets, Erlang B on one link."""

from __future__ import annotations

import json
import pathlib
import re
from dataclasses import replace

import numpy as np
import pytest
from erlang_mpmath import mp_erlang

from netdim.cli import main
from netdim.dimension import SizingOptions
from netdim.evaluate import evaluate
from netdim.model import Demand, Link, Network, Route, Site
from netdim.netfile import loads_network, read_network
from netdim.studies.growth import file_rates, growth_study

NETWORKS = pathlib.Path(__file__).resolve().parent.parent / "networks"
VILLAGES = NETWORKS / "three-villages.yaml"


def one_link(traffic=10.0, module=1, cost=1.0, target=0.01):
    return Network("one", (Site("A"), Site("B")),
                   (Link("AB", ("A", "B"), module=module, cost_per_module=cost),),
                   (Demand("AB", ("A", "B"), traffic, target=target,
                           routes=(Route((0,), (1.0,)),)),))


def fewest_servers(a, target):
    """Smallest n with E(a, n) <= target, by Erlang's formula in mpmath."""
    n = 0
    while mp_erlang(a, n) > target:
        n += 1
    return n


def test_one_link_grows_as_erlang_b_says_each_year():
    net = one_link(10.0)
    study = growth_study(net, rate=0.07, years=6)
    for y in study.years:
        a = 10.0 * 1.07 ** y.year
        # Erlang's loss formula (mpmath): the fewest circuits meeting 1 % at that year's load
        assert int(y.capacities[0]) == fewest_servers(a, 0.01)
        assert y.met


def test_modules_are_bought_whole_and_only_in_the_year_needed():
    net = one_link(10.0, module=5, cost=3.0)
    study = growth_study(net, rate=0.15, years=5)
    prev = 0
    for y in study.years:
        a = 10.0 * 1.15 ** y.year
        need = fewest_servers(a, 0.01)  # mpmath Erlang B
        want = prev if prev >= need else prev + 5 * -(-(need - prev) // 5)
        assert int(y.capacities[0]) == want
        assert y.cost == pytest.approx(3.0 * (want - prev) / 5)
        prev = want
    grown = [y.year for y in study.years if y.added[0] > 0]
    assert study.next_module_year()["AB"] == grown[0]


def test_discounted_total_is_the_sum_of_discounted_years():
    study = growth_study(one_link(10.0), rate=0.1, years=4, discount=0.08)
    # present value: cost_y / 1.08^y (common practice, no source), summed here by hand
    by_hand = sum(y.cost / 1.08 ** y.year for y in study.years)
    assert study.total_discounted_cost == pytest.approx(by_hand, rel=1e-12)
    assert study.total_cost == pytest.approx(sum(y.cost for y in study.years))
    assert study.total_discounted_cost < study.total_cost


def test_villages_capacity_never_falls_and_each_year_meets_when_evaluated_afresh():
    net = read_network(VILLAGES)
    study = growth_study(net, rate=0.12, years=4)
    caps = [net.capacities()] + [y.capacities for y in study.years]
    for a, b in zip(caps, caps[1:], strict=False):
        assert (b >= a).all()
    for y in study.years:
        grown = replace(net, demands=tuple(replace(d, traffic=d.traffic * 1.12 ** y.year)
                                           for d in net.demands))
        ev = evaluate(grown, y.capacities)  # the fixed point run here, apart from the study
        assert (ev.blocking <= ev.target * (1 + 1e-9)).all()
        assert y.met
    assert study.all_met and str(study.verdict) == "met"


def test_start_installed_sizes_year_0_from_the_installed_units():
    net = read_network(VILLAGES)
    study = growth_study(net, rate=0.0, years=1, start="installed")
    assert list(study.start_capacities) == [0, 0, 0]
    assert study.years[0].cost > 0 and study.years[1].cost == 0


def test_per_demand_rates_from_the_file():
    text = VILLAGES.read_text() + "x-growth: {ASH-BRY: 0.5}\n"
    net = loads_network(text, source="v.yaml")
    assert file_rates(net) == {"ASH-BRY": 0.5}
    study = growth_study(net, rate=0.0, years=1, rates=file_rates(net))
    assert study.years[1].offered == pytest.approx(3.5 * 1.5 + 3.0 + 2.0)


@pytest.mark.parametrize("extra, match", [
    ("x-growth: [1, 2]\n", r"v.yaml: x-growth: must map demand ids to yearly rates"),
    ("x-growth: {NOPE: 0.1}\n", r"v.yaml: x-growth: demand 'NOPE' is not defined"),
    ("x-growth: {ASH-BRY: -2}\n", r"v.yaml: x-growth: ASH-BRY: must be a yearly rate"),
])
def test_file_rate_errors(extra, match):
    net = loads_network(VILLAGES.read_text() + extra, source="v.yaml")
    with pytest.raises(ValueError, match=match):
        file_rates(net)


@pytest.mark.parametrize("kwargs, match", [
    ({"rate": -1.0}, r"rate: must be a yearly rate in \(-1, 10\]"),
    ({"years": 0}, r"years: must be an integer in 1\.\.50, got 0"),
    ({"discount": 2.0}, r"discount: must lie in \[0, 1\]"),
    ({"start": "later"}, r"start: unknown value 'later'; choose one of capacities, installed"),
    ({"start": "capacities"}, r"link 'AB' has no capacity"),
    ({"rates": {"X": 0.1}}, r"rates: demand 'X' is not defined"),
    ({"sizing": SizingOptions(objective="net-value")}, r"sizing: a growth plan is sized for"),
])
def test_bad_arguments_are_named(kwargs, match):
    with pytest.raises(ValueError, match=match):
        growth_study(one_link(), **kwargs)


def test_cli_json(capsys):
    assert main(["growth", str(VILLAGES), "--rate", "10%", "--years", "2", "--json",
                 "--quiet"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert [y["year"] for y in out["years"]] == [0, 1, 2]
    assert set(out) >= {"years", "links", "total_cost", "total_discounted_cost", "all_met"}
    assert set(out["links"][0]) == {"id", "start", "capacity", "next_module_year"}


def test_cli_text_and_csv(tmp_path, capsys):
    assert main(["growth", str(VILLAGES), "--rate", "10%", "--years", "4", "--csv",
                 str(tmp_path), "--discount", "8%"]) == 0
    out = capsys.readouterr().out
    assert "next module" in out and "discounted (8 %)" in out
    lines = (tmp_path / "growth.csv").read_text().splitlines()
    assert lines[0].startswith("year,link,capacity") and len(lines) == 1 + 5 * 3


def test_cli_year_not_met_exits_1(tmp_path, capsys):
    # a group at its max_capacity cannot follow the growth (invented file)
    path = tmp_path / "capped.yaml"
    path.write_text("name: capped\nsites: [A, B]\nlinks:\n  - {id: AB, ends: [A, B], "
                    "capacity: 18, max_capacity: 18}\ndemands:\n  - {between: [A, B], "
                    "traffic: 10}\n")
    assert main(["growth", str(path), "--rate", "20%", "--years", "2"]) == 1
    assert "targets not met in year 1, 2" in capsys.readouterr().err


@pytest.mark.parametrize("argv, match", [
    ([], r"three-villages.yaml: --rate: give a yearly growth rate"),
    (["--rate", "2000%"], r"three-villages.yaml: --rate: must be a yearly rate in \(-1, 10\]"),
    (["--rate", "1%", "--years", "90"], r"--years: must be an integer in 1\.\.50, got 90"),
    (["--rate", "1%", "--discount", "150%"], r"--discount: must lie in \[0, 1\]"),
    (["--rate", "1%", "--gap", "2"], r"--gap: must lie in \[0, 1\)"),
])
def test_cli_errors_are_one_line(argv, match, capsys):
    assert main(["growth", str(VILLAGES), *argv]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and re.search(match, err)


def test_capacity_arrays_are_read_only():
    y = growth_study(one_link(), rate=0.1, years=1).years[1]
    with pytest.raises(ValueError):
        y.capacities[0] = 0
    assert isinstance(y.capacities, np.ndarray)

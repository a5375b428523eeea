"""Work the sizer refuses, or does at once, whatever the numbers in the file (issue 19).

References: Erlang B by its recursion (the ``erlang_b_ref`` fixture; Jagerman 1974) for the
one-link answers; the limits are the documented constants of netdim.dimension.choices.
"""

from __future__ import annotations

import json
import pathlib
import tracemalloc

import numpy as np
import pytest

from netdim.cli import main
from netdim.dimension import SizingChoices, dimension
from netdim.dimension.choices import (
    MAX_TABLE_CELLS,
    MAX_TABLE_UNITS,
    LossTable,
    check_sizing_work,
)
from netdim.errors import ModelTooLargeError
from netdim.model import Demand, Link, Network, Route, Site

NETWORKS = pathlib.Path(__file__).resolve().parent.parent / "networks"


def one_link(traffic, module=1, target=0.01):
    return Network("one", (Site("A"), Site("B")),
                   (Link("AB", ("A", "B"), module=module),),
                   (Demand("AB", ("A", "B"), traffic, target=target,
                           routes=(Route((0,), (1.0,)),)),))


def test_a_huge_module_is_sized_at_once(erlang_b_ref):
    # Issue 19: one link with module 9999999 and 5 E hung; one module is the answer
    # (E(5, 9999999) is 0 to double precision; E(5, 0) = 1 misses the target).
    assert erlang_b_ref(5.0, 0) > 0.01
    plan = dimension(one_link(5.0, module=9_999_999))
    assert list(plan.capacities) == [9_999_999] and list(plan.modules) == [1]
    assert plan.cost == 1.0 and plan.lower_bound == 1.0 and plan.evaluation.all_met


def test_cli_huge_module(tmp_path, capsys):
    p = tmp_path / "big.yaml"
    p.write_text("sites: [{id: A}, {id: B}]\n"
                 "links: [{id: AB, ends: [A, B], module: 9999999, cost_per_module: 1}]\n"
                 "demands: [{between: [A, B], traffic: 5}]\n")
    assert main(["size", str(p), "--json", "--quiet"]) == 0
    assert '"capacity": 9999999' in capsys.readouterr().out


def test_a_load_beyond_the_table_limit_is_refused_before_any_work(tmp_path, capsys):
    big = 1.2 * MAX_TABLE_UNITS
    with pytest.raises(ModelTooLargeError,
                       match=r"link 'AB': a load of up to 1\.2e\+06 erlangs needs Erlang B "
                             r"up to about \d+ circuits, beyond the sizer's limit of 1000000 "
                             r"per link; express traffic and capacity in larger units"):
        dimension(one_link(big))
    p = tmp_path / "huge.yaml"
    p.write_text("sites: [{id: A}, {id: B}]\nlinks: [{id: AB, ends: [A, B]}]\n"
                 f"demands: [{{between: [A, B], traffic: {big:.0f}}}]\n")
    assert main(["size", str(p), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("netdim: error: link 'AB': a load of up to 1.2e+06 erlangs")
    assert len(err.strip().splitlines()) == 1


def test_tables_over_the_cell_limit_are_refused():
    # many busy links with 1-circuit modules: the tables alone would take gigabytes
    n = MAX_TABLE_CELLS // 400_000 + 2
    sites = tuple(Site(f"S{i}") for i in range(n + 1))
    links = tuple(Link(f"L{i}", (f"S{i}", f"S{i + 1}")) for i in range(n))
    demands = tuple(Demand(f"D{i}", (f"S{i}", f"S{i + 1}"), 400_000.0,
                           routes=(Route((i,), (1.0,)),)) for i in range(n))
    net = Network("busy", sites, links, demands)
    with pytest.raises(ModelTooLargeError,
                       match=r"network 'busy': sizing would tabulate \d+ module counts over "
                             rf"{n} links .* beyond the sizer's limit of {MAX_TABLE_CELLS}; "
                             "give the busiest links larger modules"):
        check_sizing_work(net, SizingChoices.from_network(net))
    # the same loads in modules of 100 circuits fit
    wide = Network("busy", sites, tuple(Link(f"L{i}", (f"S{i}", f"S{i + 1}"), module=100)
                                        for i in range(n)), demands)
    check_sizing_work(wide, SizingChoices.from_network(wide))


def test_one_heavy_link_among_many_does_not_cost_its_table_times_the_links(erlang_b_ref):
    # The tables hold each link's own window: 2001 links, one offered 5e4 E, need a few
    # megabytes (a dense table would be 5e4 x 2001 values, 800 MB).
    loads = np.r_[5e4, np.ones(2000)]
    tracemalloc.start()
    table = LossTable(loads)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert peak < 20e6
    # and the values are Erlang B's (recursion of the reference)
    assert table.g(1, 3) == pytest.approx(-np.log1p(-erlang_b_ref(1.0, 3)), rel=1e-12)
    assert table.g(0, 50_000) == pytest.approx(-np.log1p(-erlang_b_ref(5e4, 50_000)),
                                               rel=1e-9)


def test_a_module_larger_than_the_links_headroom_leaves_it_as_installed(tmp_path, capsys):
    """A link whose module is larger than its room to grow (module 1e7, installed 8, at most
    30) can only stay as installed; sizing says so at once instead of tabulating Erlang B to
    1e7 circuits for the bound (issue 19, fuzz finding odd_number: over 30 s before)."""
    text = (NETWORKS / "three-villages.yaml").read_text().replace(
        "{id: ASH-BRY, ends: [ASH, BRY], capacity: 8,",
        "{id: ASH-BRY, ends: [ASH, BRY], capacity: 8, installed: 8, module: 10000000,")
    path = tmp_path / "net.yaml"
    path.write_text(text)
    status = main(["size", str(path), "--json", "--quiet", "--bound-time", "5"])
    out = json.loads(capsys.readouterr().out)
    assert status in (0, 1)
    assert {x["id"]: x["capacity"] for x in out["links"]}["ASH-BRY"] == 8

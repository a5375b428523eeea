"""Topology comparison: rows against sizing alone, variants against networkx generators."""

from __future__ import annotations

import json
import pathlib
import re

import networkx as nx
import pytest

from netdim.cli import main
from netdim.dimension import dimension
from netdim.model import Network
from netdim.netfile import read_network
from netdim.studies.compare import compare_designs
from netdim.studies.variants import Variant, build_variant, parse_variants

NETWORKS = pathlib.Path(__file__).resolve().parent.parent / "networks"
VILLAGES = NETWORKS / "three-villages.yaml"
REGIONAL = NETWORKS / "regional-telephone.yaml"


def edges(net):
    return {frozenset(k.ends) for k in net.links}


def nx_edges(g, names):
    return {frozenset((names[a], names[b])) for a, b in g.edges}


# -- variants have the links their names promise (networkx generators) -------------------------
def test_variants_of_the_regional_network_match_networkx_generators():
    net = read_network(REGIONAL)
    ids = [s.id for s in net.sites]
    mesh, _ = build_variant(net, Variant("mesh"))
    assert edges(mesh) == nx_edges(nx.complete_graph(len(ids)), ids)  # networkx
    star, _ = build_variant(net, Variant("star", ("TN",)))
    others = ["TN"] + [i for i in ids if i != "TN"]
    assert edges(star) == nx_edges(nx.star_graph(len(ids) - 1), others)  # node 0 the hub
    ring, _ = build_variant(net, Variant("ring"))
    assert nx.is_isomorphic(nx.Graph([tuple(e) for e in edges(ring)]),
                            nx.cycle_graph(len(ids)))
    assert all(nx.Graph([tuple(e) for e in edges(ring)]).degree(i) == 2 for i in ids)
    two, _ = build_variant(net, Variant("two-tandem", ("TN", "TS")))
    rest = [i for i in ids if i not in ("TN", "TS")]
    bip = nx.complete_bipartite_graph(2, len(rest))  # nodes 0, 1 the tandems
    assert edges(two) == nx_edges(bip, ["TN", "TS", *rest]) | {frozenset(("TN", "TS"))}


def test_ring_routes_reach_every_pair_and_costs_follow_distance():
    net = read_network(REGIONAL)
    ring, unroutable = build_variant(net, Variant("ring"))
    assert unroutable == ()
    g = nx.Graph([k.ends for k in ring.links])
    # networkx: the longest shortest path sets the hops the ring's routes need
    need = max(nx.shortest_path_length(g, *d.between) for d in net.demands)
    assert ring.routing.max_hops == need > net.routing.max_hops
    # cost per module = median over the file's links of cost / length, times the
    # Euclidean distance of the ends (the module's rule, checked on one link here)
    ratios = sorted(k.cost_per_module / k.length for k in net.links)
    med = (ratios[len(ratios) // 2] if len(ratios) % 2 else
           (ratios[len(ratios) // 2 - 1] + ratios[len(ratios) // 2]) / 2)
    def dist(ends):
        a, b = (net.sites[net.site_index(s)] for s in ends)
        return ((a.x - b.x) ** 2 + (a.y - b.y) ** 2) ** 0.5

    # the file's lengths are km, its coordinates another unit: the median km per unit
    per_unit = sorted(k.length / dist(k.ends) for k in net.links)
    km = (per_unit[len(per_unit) // 2] if len(per_unit) % 2 else
          (per_unit[len(per_unit) // 2 - 1] + per_unit[len(per_unit) // 2]) / 2)
    link = ring.links[0]
    assert link.length == pytest.approx(km * dist(link.ends), rel=1e-6)
    assert link.cost_per_module == pytest.approx(med * km * dist(link.ends), rel=1e-6)
    # a variant link on the same pair as a file link costs about what the file's does
    file_link = next(k for k in net.links if k.id == "QML-TN")
    star, _ = build_variant(net, Variant("star", ("TN",)))
    same = next(k for k in star.links if set(k.ends) == {"QML", "TN"})
    assert same.cost_per_module == pytest.approx(file_link.cost_per_module, rel=0.5)


def test_parse_variants_reads_the_two_tandems_as_one():
    vs = parse_variants("mesh,star:HUB,ring,two-tandem:A,B")
    assert [v.name for v in vs] == ["mesh", "star:HUB", "ring", "two-tandem:A,B"]


@pytest.mark.parametrize("text, match", [
    ("blob", r"variants: unknown variant 'blob'"),
    ("star", r"variants: star takes one site \(star:HUB\), got none"),
    ("two-tandem:A", r"variants: two-tandem takes two sites \(two-tandem:A,B\), got A"),
    ("mesh:X", r"variants: mesh takes no site, got X"),
    ("", r"variants: name at least one variant"),
])
def test_parse_variants_errors(text, match):
    with pytest.raises(ValueError, match=match):
        parse_variants(text)


def test_build_variant_errors():
    net = read_network(VILLAGES)
    with pytest.raises(ValueError, match=r"variants: star:NOPE: site 'NOPE' is not defined"):
        build_variant(net, Variant("star", ("NOPE",)))
    with pytest.raises(ValueError, match=r"two-tandem needs two different sites"):
        build_variant(net, Variant("two-tandem", ("ASH", "ASH")))


# -- a comparison row equals sizing that design alone ------------------------------------------
@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_rows_equal_sizing_each_design_alone():
    net = read_network(VILLAGES)
    star, _ = build_variant(net, Variant("star", ("ASH",)))
    cmp = compare_designs([("file", net), ("star", star)], failure_target=0.1)
    for row, design in zip(cmp.rows, (net, star), strict=True):
        plan = dimension(design)
        assert row.cost == plan.cost
        assert row.capacity == int(plan.capacities.sum())
        assert row.links_built == int((plan.capacities > 0).sum())
        assert row.worst_blocking == float(plan.evaluation.blocking.max())
    # a star has no second way round: cutting a spoke leaves a demand with no route
    assert cmp.rows[1].failure_worst == 1.0 and cmp.rows[1].failure_survivors == 0
    assert cmp.cheapest == "file"


@pytest.mark.slow  # about a second: out of the quick round (issue 13)
def test_a_pair_one_design_does_not_carry_is_named():
    full = read_network(VILLAGES)
    less = Network("less", full.sites, full.links, full.demands[:2], routing=full.routing)
    cmp = compare_designs([("full", full), ("less", less)], failures=False)
    assert cmp.rows[0].missing == ()
    assert cmp.rows[1].missing == ("ASH-CLV",)
    assert cmp.cheapest == "full"  # the one that carries every pair


def test_compare_errors():
    net = read_network(VILLAGES)
    with pytest.raises(ValueError, match=r"designs: give at least one design"):
        compare_designs([])
    with pytest.raises(ValueError, match=r"designs: two designs are named 'a'"):
        compare_designs([("a", net), ("a", net)])
    with pytest.raises(ValueError, match=r"failure_target: must lie in \(0, 1\)"):
        compare_designs([("a", net)], failure_target=0.0)


# -- command line ------------------------------------------------------------------------------
@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_cli_variants_json(capsys):
    assert main(["compare", str(VILLAGES), "--variants", "mesh,star:ASH", "--json",
                 "--quiet"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert [d["name"] for d in out["designs"]] == ["three-villages", "mesh", "star:ASH"]
    assert set(out["designs"][0]) >= {"cost", "capacity", "links_built", "worst_blocking",
                                      "mean_blocking", "cost_per_erlang",
                                      "failure_worst_blocking", "gap", "missing"}
    assert out["cheapest"] == "three-villages"


def test_cli_different_demands_exit_1(tmp_path, capsys):
    other = tmp_path / "pair.yaml"  # invented: other sites, other demands
    other.write_text("name: pair\nsites: [P, Q]\nlinks:\n  - {id: PQ, ends: [P, Q]}\n"
                     "demands:\n  - {between: [P, Q], traffic: 5}\n")
    assert main(["compare", str(VILLAGES), str(other), "--no-failures"]) == 1
    captured = capsys.readouterr()
    assert "three-villages carries no route for" in captured.out
    assert "No design meets every target and carries every pair." in captured.out


@pytest.mark.parametrize("argv, match", [
    (["--variants", "blob"], r"--variants: unknown variant 'blob'"),
    (["--variants", "star:NOPE"], r"three-villages.yaml: variants: star:NOPE: site 'NOPE'"),
    ([str(VILLAGES), "--variants", "mesh"], r"--variants: give exactly one FILE"),
    (["--gap", "3"], r"--gap: must lie in \[0, 1\)"),
])
def test_cli_errors_are_one_line(argv, match, capsys):
    assert main(["compare", str(VILLAGES), *argv]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and re.search(match, err)


@pytest.mark.slow
def test_pool_gives_the_serial_rows():
    net = read_network(VILLAGES)
    star, _ = build_variant(net, Variant("star", ("ASH",)))
    designs = [("file", net), ("star", star)]
    assert compare_designs(designs, workers=2).to_dict() == compare_designs(designs).to_dict()


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_installed_capacity_is_counted_and_the_cost_marked():
    from dataclasses import replace

    from netdim.studies.tables import compare_text

    base = read_network(VILLAGES)
    net = replace(base, links=tuple(replace(k, installed=4) for k in base.links))
    cmp = compare_designs([("file", net), ("new", base)], failures=False)
    # the units in the installed fields, summed here; the plan pays only for additions
    assert cmp.rows[0].installed == 12 and cmp.rows[1].installed == 0
    assert cmp.rows[0].cost == dimension(net).cost
    text = compare_text(cmp)
    assert f"{cmp.rows[0].cost:,.1f}*" in text and f"{cmp.rows[1].cost:,.1f}*" not in text
    assert "(file: 12 units)" in text

"""Single-failure studies: rows against independent evaluations, Erlang B and networkx."""

from __future__ import annotations

import json
import pathlib
import re
from dataclasses import replace

import networkx as nx
import numpy as np
import pytest
from erlang_mpmath import mp_erlang

from netdim.cli import main
from netdim.evaluate import evaluate
from netdim.model import Demand, Link, Network, Route, Site
from netdim.netfile import read_network
from netdim.studies.failures import failure_study
from netdim.topology import Gravity, LinkCosts, import_topology

NETWORKS = pathlib.Path(__file__).resolve().parent.parent / "networks"
REGIONAL = NETWORKS / "regional-telephone.yaml"
VILLAGES = NETWORKS / "three-villages.yaml"


def parallel_pair(a=4.0, c1=10, c2=7, target=0.05):
    """Two parallel groups between A and B; the demand prefers the first (invented)."""
    return Network("pair", (Site("A"), Site("B")),
                   (Link("L1", ("A", "B"), c1), Link("L2", ("A", "B"), c2)),
                   (Demand("AB", ("A", "B"), a, target=target,
                           routes=(Route((0,), (1.0,)), Route((1,), (1.0,)))),))


def by_element(study):
    return {r.element: r for r in study.rows}


def routes_without(network, failed_ids):
    """The network with every route over ``failed_ids`` taken away, written out here
    independently of the study (demands left with no route are dropped)."""
    gone = {network.link_index(i) for i in failed_ids}
    kept = []
    for d in network.demands:
        routes = tuple(r for r in d.routes if not gone.intersection(r.links))
        if routes:
            kept.append(replace(d, routes=routes))
    return replace(network, demands=tuple(kept))


# -- a failure row on a single link is Erlang B -------------------------------------------------
def test_parallel_groups_after_a_failure_are_erlang_b_of_the_survivor():
    net = parallel_pair()
    study = failure_study(net)
    rows = by_element(study)
    # Erlang's loss formula (mpmath, tests/erlang_mpmath.py): the whole demand on the group
    # left, E(4, 7) and E(4, 10).
    assert rows["L1"].worst_blocking == pytest.approx(float(mp_erlang(4.0, 7)), rel=1e-10)
    assert rows["L2"].worst_blocking == pytest.approx(float(mp_erlang(4.0, 10)), rel=1e-10)
    assert rows["L1"].links == ("L1",) and rows["L1"].lost == ()
    # E(4, 7) = 0.0637 lies above the 5 % target, so the failure of L1 misses it
    assert float(mp_erlang(4.0, 7)) > 0.05
    assert str(rows["L1"].verdict) == "missed" and not rows["L1"].survives
    assert str(rows["L2"].verdict) == "met" and rows["L2"].survives
    assert study.rows[0].element == "L1"  # worst first
    assert not study.all_survive and str(study.verdict) == "missed"


def test_a_looser_failure_target_is_what_the_rows_are_judged_against():
    net = parallel_pair()
    # E(4, 7) = 0.0637 (mpmath) lies below 0.07, so every failure survives at 7 %.
    study = failure_study(net, target=0.07)
    assert study.all_survive and str(study.verdict) == "met"
    assert all(float(r.target[0]) == 0.07 for r in study.rows)
    # the intact network keeps the demand's own 5 % target
    assert float(study.intact.target[0]) == 0.05


def test_a_demand_with_no_route_left_is_lost_and_never_survives():
    net = Network("one", (Site("A"), Site("B")), (Link("L", ("A", "B"), 5),),
                  (Demand("AB", ("A", "B"), 1.0, routes=(Route((0,), (1.0,)),)),))
    row = failure_study(net).rows[0]
    assert row.lost == ("AB",) and row.worst_blocking == 1.0 and row.mean_blocking == 1.0
    assert str(row.verdict) == "missed" and row.over_target == ("AB",)
    assert row.to_dict()["survives"] is False


# -- a failure row equals evaluating the network with that element removed ---------------------
@pytest.mark.parametrize("path", [REGIONAL, VILLAGES])
def test_each_row_equals_evaluating_the_network_without_that_link(path):
    net = read_network(path)
    study = failure_study(net)
    assert len(study.rows) == len(net.links)
    for row in study.rows:
        caps = net.capacities().copy()
        caps[net.link_index(row.element)] = 0
        ev = evaluate(routes_without(net, [row.element]), caps)
        assert row.demand_ids == ev.demand_ids
        np.testing.assert_array_equal(row.blocking, ev.blocking)
        assert row.worst_blocking == pytest.approx(float(ev.blocking.max()), rel=0, abs=0)
        # mean: erlangs blocked over erlangs offered, computed here from the evaluation
        blocked = float(ev.offered @ ev.blocking)
        assert row.mean_blocking == pytest.approx(blocked / float(ev.offered.sum()), rel=1e-12)
        missed = [d for d, b, t in zip(ev.demand_ids, ev.blocking, ev.target, strict=True)
                  if b > t * (1 + 1e-9)]
        assert list(row.over_target) == missed
    assert study.intact.lost == () and study.intact.links == ()
    np.testing.assert_array_equal(study.intact.blocking, evaluate(net).blocking)


def test_rows_are_sorted_worst_first():
    study = failure_study(read_network(REGIONAL), target=0.05)
    keys = [(0 if str(r.verdict) == "missed" else 1 if str(r.verdict) == "unclear" else 2,
             -r.worst_blocking) for r in study.rows]
    # within one verdict, the worst blocking first (lost demands are blocking 1)
    assert keys == sorted(keys)


# -- real topology: a bridge separates demands (networkx) -------------------------------------
def ntt():
    net = import_topology(NETWORKS / "topozoo-Ntt.graphml", Gravity(200.0),
                          costs=LinkCosts(module=1), policy="alternate").network
    return net.with_capacities(np.full(len(net.links), 40))


def test_ntt_bridges_lose_exactly_the_demands_networkx_separates():
    # Internet Topology Zoo, NTT (networks/SOURCES.md): cut edges from networkx.bridges,
    # the sides from networkx.connected_components of the graph less the edge.
    net = ntt()
    g = nx.Graph([link.ends for link in net.links])
    bridges = {frozenset(e) for e in nx.bridges(g)}
    assert bridges, "the NTT graph has pendant sites"
    bridge_links = [k.id for k in net.links if frozenset(k.ends) in bridges]
    study = failure_study(net, links=bridge_links)
    for row in study.rows:
        link = net.links[net.link_index(row.element)]
        h = g.copy()
        h.remove_edge(*link.ends)
        side = {n: i for i, comp in enumerate(nx.connected_components(h)) for n in comp}
        separated = {d.id for d in net.demands if side[d.between[0]] != side[d.between[1]]}
        assert set(row.lost) == separated
        assert str(row.verdict) == "missed"


def test_site_failure_ends_the_demands_at_the_site_and_takes_its_links():
    net = read_network(REGIONAL)
    study = failure_study(net, sites=["TN"])
    row = study.rows[0]
    assert row.kind == "site" and row.element == "TN"
    # the links at TN, and the demands with an end there, read off the file here
    assert set(row.links) == {k.id for k in net.links if "TN" in k.ends}
    assert set(row.ended) == {d.id for d in net.demands if "TN" in d.between}
    assert "TN" not in {s for d in row.demand_ids for s in net.demands[
        net.demand_ids.index(d)].between}


# -- parallel runs are the same ----------------------------------------------------------------
@pytest.mark.slow
def test_pool_gives_the_rows_of_the_serial_run():
    net = read_network(REGIONAL)
    serial = failure_study(net)
    pooled = failure_study(net, workers=2)
    assert serial.to_dict() == pooled.to_dict()


# -- errors ------------------------------------------------------------------------------------
@pytest.mark.parametrize("kwargs, match", [
    ({"links": ["NOPE"]}, r"links: link 'NOPE' is not defined"),
    ({"sites": ["NOPE"]}, r"sites: site 'NOPE' is not defined"),
    ({"target": 1.5}, r"target: must lie in \(0, 1\), got 1.5"),
    ({"workers": 0}, r"workers: must be an integer in 1\.\.256, got 0"),
    ({"method": "guess"}, r"method: unknown method 'guess'"),
])
def test_bad_arguments_are_named(kwargs, match):
    with pytest.raises(ValueError, match=match):
        failure_study(parallel_pair(), **kwargs)


def test_no_capacities_is_refused():
    net = Network("one", (Site("A"), Site("B")), (Link("L", ("A", "B")),),
                  (Demand("AB", ("A", "B"), 1.0, routes=(Route((0,), (1.0,)),)),))
    with pytest.raises(ValueError, match=r"link 'L' has no capacity"):
        failure_study(net)


# -- command line ------------------------------------------------------------------------------
def test_cli_json_and_exit_status(capsys):
    assert main(["failures", str(VILLAGES), "--json"]) == 1
    out = json.loads(capsys.readouterr().out)
    assert out["count"] == 3 and out["all_survive"] is False
    assert set(out["failures"][0]) >= {"element", "lost", "worst_demand", "worst_blocking",
                                       "mean_blocking", "over_target", "verdict", "survives"}


def test_cli_all_survive_exits_0(tmp_path, capsys):
    assert main(["failures", str(REGIONAL), "--links", "KST-OAK", "--target", "5%",
                 "--csv", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    assert "link KST-OAK" in out and "survives" in out and "1 of 1 failures survived" in out
    assert (tmp_path / "failures.csv").read_text().startswith("kind,element,")


@pytest.mark.parametrize("argv, match", [
    (["--links", "NOPE"], "regional-telephone.yaml: --links: link 'NOPE' is not defined"),
    (["--target", "2"], r"--target: must lie in \(0, 1\), got 2.0"),
    (["--target", "x"], "expected a share such as 5% or 0.05"),
    (["--seed", "1"], "--seed: applies to --method simulate only"),
    (["--workers", "0"], "expected a positive integer"),
])
def test_cli_errors_are_one_line(argv, match, capsys):
    assert cli_status(["failures", str(REGIONAL), *argv]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1
    assert re.search(match, err)


def cli_status(argv):
    """main's status, also where argparse exits (bad values of a flag)."""
    try:
        return main(argv)
    except SystemExit as exc:
        return exc.code


# -- route diversity (Menger: networkx edge connectivity) --------------------------------------
def test_diversity_counts_disjoint_routes_and_networkx_bounds_them():
    from netdim.studies.diversity import route_diversity

    net = read_network(REGIONAL)
    g = nx.Graph([k.ends for k in net.links])
    for d, rec in zip(net.demands, route_diversity(net), strict=True):
        # networkx: edge connectivity of the two ends (no parallel links in this file)
        assert rec.topology_bound == nx.edge_connectivity(g, *d.between)
        assert rec.disjoint_routes <= rec.topology_bound
        # two routes sharing no link exist exactly when some pair of routes is disjoint
        pairs = any(not set(a.links) & set(b.links)
                    for i, a in enumerate(d.routes) for b in d.routes[i + 1:])
        assert (rec.disjoint_routes >= 2) == pairs


def test_cli_diversity_names_the_demands_short_of_it(tmp_path, capsys):
    # invented: B hangs off A by one link, so A-B and B-C have one link-disjoint route
    path = tmp_path / "tail.yaml"
    path.write_text("name: tail\nrouting: {policy: alternate, max_hops: 2}\nsites: [A, B, C]\n"
                    "links:\n  - {id: AB, ends: [A, B], capacity: 10}\n"
                    "  - {id: AC, ends: [A, C], capacity: 10}\n"
                    "  - {id: AC2, ends: [A, C], capacity: 10}\n"
                    "demands:\n  - {between: [A, B], traffic: 1}\n"
                    "  - {between: [A, C], traffic: 1}\n")
    assert main(["failures", str(path), "--diversity", "2", "--json"]) == 1
    out = json.loads(capsys.readouterr().out)
    assert [d["demand"] for d in out["diversity"]["short"]] == ["A-B"]
    assert out["diversity"]["short"][0]["topology_bound"] == 1


# -- verdicts the figures support ----------------------------------------------------------------
def test_a_simulated_interval_containing_the_target_is_unclear_not_survived():
    net = parallel_pair()
    t = float(mp_erlang(4.0, 7))  # mpmath: the blocking the cut of L1 leaves, as the target
    study = failure_study(net, links=["L1"], method="simulate", target=t, seed=3, calls=20000)
    row = study.rows[0]
    # the same run by hand: the interval of the one demand on L2 alone
    ev = evaluate(routes_without(net, ["L1"]), [0, 7], method="simulate", seed=3, calls=20000)
    lo, hi = ev.blocking_interval[0]
    assert lo <= t <= hi  # the run cannot tell, so neither may the study
    assert str(row.verdict) == "unclear" and not row.survives
    assert row.unclear == ("AB",) and str(study.verdict) == "unclear"


def test_two_fixed_point_solutions_that_disagree_make_a_demand_unclear():
    from netdim.evaluate import Evaluation
    from netdim.studies._judge import judge

    def ev(blocking, alternative=None):
        return Evaluation(method="fixed-point", demand_ids=("X", "Y"), offered=[1.0, 1.0],
                          blocking=blocking, target=[0.01, 0.01], link_ids=("L",),
                          capacity=[1], link_offered=[0.0], link_carried=[0.0],
                          link_blocking=[0.0], link_blocking_alternate=[0.0],
                          status="bistable", alternative=alternative)

    # X: met in one solution, missed in the other; Y: missed in both (common practice: a
    # verdict holds only where every solution of the equations agrees)
    both = ev([0.005, 0.5], alternative=ev([0.05, 0.6]))
    assert list(judge(both)) == ["unclear", "missed"]


@pytest.mark.parametrize("links", [None, []])
def test_the_json_written_row_by_row_is_the_json_of_the_whole_study(links):
    # the reference is the standard library's json.dumps of the whole tree
    study = failure_study(read_network(REGIONAL), links=links)
    extra = {"diversity": {"required": 2, "short": []}}
    assert "".join(study.json_chunks()) == json.dumps(study.to_dict(), indent=2)
    assert "".join(study.json_chunks(extra)) == json.dumps(study.to_dict() | extra, indent=2)

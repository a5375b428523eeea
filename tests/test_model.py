"""The immutable model, the Evaluation result and capacity checks.

These are checks of bookkeeping, not of teletraffic results: the expected values follow from
the definitions in netdim/model.py (loads proportional to holding time: Little's law,
common practice, no source).
"""

import dataclasses
import re

import networkx as nx
import numpy as np
import pytest

from netdim.evaluate import evaluate, resolve_capacities
from netdim.evaluate.result import Evaluation
from netdim.model import Demand, Link, Network, Route, Routing, Site, incidence


def line_network(caps=(10, 10)):
    sites = (Site("A"), Site("B"), Site("C"))
    links = (
        Link("A-B", ("A", "B"), capacity=caps[0]),
        Link("B-C", ("B", "C"), capacity=caps[1]),
    )
    demands = (
        Demand("A-C", ("A", "C"), traffic=5.0, holding=2.0,
               routes=(Route((0, 1), (2.0, 0.5)),)),
        Demand("A-B", ("A", "B"), traffic=3.0, routes=(Route((0,), (1.0,)),)),
    )
    return Network("line", sites, links, demands, Routing())


def test_model_is_immutable():
    net = line_network()
    with pytest.raises(dataclasses.FrozenInstanceError):
        net.name = "other"
    with pytest.raises(dataclasses.FrozenInstanceError):
        net.links[0].capacity = 3


def test_lookups_name_missing_items():
    net = line_network()
    assert net.link_index("B-C") == 1
    assert net.site_index("C") == 2
    with pytest.raises(KeyError, match="link 'X-Y' is not defined"):
        net.link_index("X-Y")
    with pytest.raises(KeyError, match="site 'Z' is not defined"):
        net.site_index("Z")


def test_rate_and_holding_factor():
    # Offered erlangs = arrival rate x mean holding time (Little's law; common practice).
    net = line_network()
    d = net.demands[0]
    assert d.rate == pytest.approx(2.5)
    inc = incidence(net)
    # Route steps: A-C on A-B for 2 h (factor 1), on B-C for 0.5 h (factor 0.25).
    assert list(inc.step_link) == [0, 1, 0]
    assert np.allclose(inc.step_factor, [1.0, 0.25, 1.0])
    assert list(inc.first_route) == [0, 1, 2]
    m = inc.matrix(inc.step_factor * inc.traffic[inc.route_demand[inc.step_route]])
    assert np.allclose(np.asarray(m.sum(axis=0)).ravel(), [8.0, 1.25])


def test_route_lengths_must_match():
    with pytest.raises(ValueError, match="links and holdings differ"):
        Route((0, 1), (1.0,))


def test_with_capacities_and_scaled():
    net = line_network()
    n2 = net.with_capacities([3, 4])
    assert list(n2.capacities()) == [3, 4]
    assert list(net.capacities()) == [10, 10]
    assert net.scaled(2.0).demands[0].traffic == pytest.approx(10.0)
    with pytest.raises(ValueError, match="expected 2 values"):
        net.with_capacities([1, 2, 3])
    with pytest.raises(ValueError, match="factor: must be >= 0"):
        net.scaled(-1)


def test_missing_capacity_is_named():
    net = line_network()
    links = (dataclasses.replace(net.links[0], capacity=None), net.links[1])
    net = dataclasses.replace(net, links=links)
    with pytest.raises(ValueError, match="link 'A-B' has no capacity"):
        net.capacities()


def test_to_graph_matches_links():
    g = line_network().to_graph()
    assert isinstance(g, nx.MultiGraph)
    assert g.number_of_nodes() == 3 and g.number_of_edges() == 2
    assert g.edges["A", "B", "A-B"]["capacity"] == 10
    assert nx.shortest_path_length(g, "A", "C") == 2  # networkx as the outside reference


def test_resolve_capacities_errors():
    net = line_network()
    with pytest.raises(ValueError, match="expected 2 values"):
        resolve_capacities(net, [1])
    with pytest.raises(ValueError, match="link 'B-C' has negative capacity -1"):
        resolve_capacities(net, [1, -1])
    with pytest.raises(ValueError, match="link 'A-B' has non-integer capacity 1.5"):
        resolve_capacities(net, [1.5, 2])
    assert resolve_capacities(net, [1.0, 2.0]).dtype == np.int64


def test_unknown_method_lists_valid_ones():
    with pytest.raises(ValueError, match="unknown method 'magic'.*fixed-point.*simulate"):
        evaluate(line_network(), method="magic")


def _evaluation(blocking):
    return Evaluation(
        method="fixed-point", demand_ids=("a", "b"), offered=[1.0, 2.0], blocking=blocking,
        target=[0.01, 0.01], link_ids=("l",), capacity=[4], link_offered=[3.0],
        link_carried=[2.0], link_blocking=[0.1], link_blocking_alternate=[0.1],
    )


def test_evaluation_derived_fields_and_json():
    ev = _evaluation([0.005, 0.02])
    assert ev.unmet == ("b",)
    assert not ev.all_met
    assert ev.carried == pytest.approx([0.995, 1.96])
    assert ev.utilisation == pytest.approx([0.5])
    d = ev.to_dict()
    for key in ("demands", "links", "method", "iterations", "residual", "warnings"):
        assert key in d
    assert set(d["demands"][0]) >= {"id", "offered", "carried", "blocking", "target", "met"}
    assert set(d["links"][0]) >= {"id", "capacity", "offered", "carried", "blocking",
                                  "utilisation"}
    with pytest.raises(ValueError):
        ev.blocking[0] = 0.5  # read-only arrays


def test_evaluation_refuses_nan():
    with pytest.raises(ValueError, match="blocking of demand 'b' is not finite"):
        _evaluation([0.1, float("nan")])


def test_validate_accepts_a_good_network():
    line_network().validate()  # no error


@pytest.mark.parametrize("change, message", [
    (lambda n: dataclasses.replace(n, demands=(dataclasses.replace(
        n.demands[0], routes=(Route((1, 0), (1.0, 1.0)),)),) + n.demands[1:]), None),
    (lambda n: dataclasses.replace(n, demands=(dataclasses.replace(
        n.demands[0], routes=(Route((0,), (1.0,)),)),)),
     "network 'line': demand 'A-C': route 1: ends at 'B', not at 'C'"),
    (lambda n: dataclasses.replace(n, demands=(dataclasses.replace(
        n.demands[0], routes=(Route((0, 5), (1.0, 1.0)),)),)),
     "network 'line': demand 'A-C': route 1: link indices must be in 0..1, got [0, 5]"),
    (lambda n: dataclasses.replace(n, demands=(dataclasses.replace(
        n.demands[0], routes=()),)), "network 'line': demand 'A-C': has no route"),
    (lambda n: dataclasses.replace(n, demands=(dataclasses.replace(
        n.demands[1], traffic=float("nan")),)),
     "network 'line': demand 'A-B': traffic must be a finite number >= 0, got nan"),
    (lambda n: dataclasses.replace(n, links=n.links + (Link("A-B", ("A", "Z")),)),
     "network 'line': link 'A-B': duplicate id"),
    (lambda n: dataclasses.replace(n, demands=(dataclasses.replace(
        n.demands[0], routes=(Route((0, 1), (1.0, 0.0)),)),)),
     "network 'line': demand 'A-C': route 1: holding times must be finite and > 0"),
])
def test_validate_names_what_is_wrong(change, message):
    # the route rules are the file format's (README, "Network files"); a network built in
    # Python gets the same check as one read from a file
    from netdim.errors import NetworkFileError

    net = change(line_network())
    if message is None:
        net.validate()
        return
    with pytest.raises(NetworkFileError, match=re.escape(message)):
        net.validate()


def test_summary_and_route_listing():
    net = line_network()
    s = net.summary()
    # counted by hand from line_network(): 2 demands, one 2-link route and one 1-link route
    assert (s["demands"], s["routes"], s["longest_route"], s["routes_given"]) == (2, 2, 2, 2)
    assert s["holding_overrides"] is True and s["offered_traffic"] == pytest.approx(8.0)
    assert net.route_listing()[0] == {"demand": "A-C", "between": ["A", "C"],
                                      "generated": False,
                                      "routes": [{"links": ["A-B", "B-C"],
                                                  "holdings": [2.0, 0.5]}]}

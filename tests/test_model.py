"""The immutable model, the Evaluation result and capacity checks.

These are checks of bookkeeping, not of teletraffic results: the expected values follow from
the definitions in netdim/model.py (loads proportional to holding time: Little's law,
common practice, no source).
"""

import dataclasses

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

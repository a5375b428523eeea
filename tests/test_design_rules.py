"""Design rules: ``min_capacity`` (links, defaults) and ``diversity`` (demands, defaults).

Independent checks: Erlang B evaluated with mpmath (the recursion B(n) = A B(n-1) /
(n + A B(n-1)), standard form); link-disjoint paths and edge connectivity with networkx
(Menger's theorem: the most edge-disjoint paths between two nodes equals their local edge
connectivity).
"""

from __future__ import annotations

import itertools
import re

import mpmath
import networkx as nx
import pytest

from netdim.cli import main
from netdim.dimension import dimension
from netdim.dimension.choices import SizingChoices
from netdim.dimension.rules import check_rules, disjoint_routes
from netdim.errors import NetworkFileError
from netdim.netfile import dumps_network, loads_network, write_plan

BASE = """\
name: rules
sites: [{id: A}, {id: B}, {id: C}]
links:
  - {id: A-B, ends: [A, B]}
  - {id: B-C, ends: [B, C]}
  - {id: A-C, ends: [A, C]}
"""


def erlang_b(n, a):
    """Erlang B by its recursion, in mpmath (independent of netdim's kernels)."""
    a = mpmath.mpf(a)
    b = mpmath.mpf(1)
    for k in range(1, n + 1):
        b = a * b / (k + a * b)
    return b


def fewest_circuits(a, target):
    n = 0
    while erlang_b(n, a) > target:
        n += 1
    return n


# -- the network file ----------------------------------------------------------------------
def test_fields_read_with_defaults_and_kept_by_write():
    text = BASE.replace("{id: B-C, ends: [B, C]}", "{id: B-C, ends: [B, C], min_capacity: 6}")
    text += ("defaults: {min_capacity: 4, diversity: 2}\n"
             "demands:\n  - {between: [A, B], traffic: 1}\n"
             "  - {between: [A, C], traffic: 1, diversity: 1}\n")
    net = loads_network(text, source="inline.yaml")
    assert [k.min_capacity for k in net.links] == [4, 6, 4]
    assert [d.diversity for d in net.demands] == [2, 1]
    assert loads_network(dumps_network(net)) == net


def test_absent_fields_mean_no_rule():
    net = loads_network(BASE + "demands:\n  - {between: [A, B], traffic: 1}\n")
    assert [k.min_capacity for k in net.links] == [None, None, None]
    assert net.demands[0].diversity == 1


def test_plan_file_keeps_the_rule_fields(tmp_path):
    text = (BASE.replace("{id: A-B, ends: [A, B]}", "{id: A-B, ends: [A, B], min_capacity: 8}")
            + "defaults:\n  diversity: 2\n"
            + "demands:\n  - {between: [A, B], traffic: 1}\n")
    src = tmp_path / "in.yaml"
    src.write_text(text)
    net = loads_network(text, source=str(src))
    out = tmp_path / "plan.yaml"
    write_plan(net, out, [8, 1, 1])
    written = out.read_text()
    assert "min_capacity: 8" in written and "diversity: 2" in written
    back = loads_network(written)
    assert back.links[0].min_capacity == 8 and back.demands[0].diversity == 2


def _demand(fields):
    return BASE + "demands:\n  - {id: D1, between: [A, B], traffic: 1, " + fields + "}\n"


CASES = [
    # (text, line, item, problem regex)
    (BASE.replace("{id: A-B, ends: [A, B]}",
                  "{id: A-B, ends: [A, B], min_capacity: 9, max_capacity: 8}")
     + "demands: []\n", 4, "link 'A-B'", r"min_capacity 9 is above max_capacity 8"),
    (BASE.replace("{id: A-B, ends: [A, B]}", "{id: A-B, ends: [A, B], min_capacity: -2}")
     + "demands: []\n", 4, "link 'A-B'", r"min_capacity must be >= 0, got -2"),
    (BASE.replace("{id: A-B, ends: [A, B]}", "{id: A-B, ends: [A, B], min_capacity: 2.5}")
     + "demands: []\n", 4, "link 'A-B'", r"min_capacity must be a whole number, got 2.5"),
    (BASE.replace("{id: A-B, ends: [A, B]}", "{id: A-B, ends: [A, B], min_capacity: x}")
     + "demands: []\n", 4, "link 'A-B'", r"min_capacity must be a number, got 'x'"),
    (_demand("diversity: 0"), 8, "demand 'D1'", r"diversity must be >= 1, got 0"),
    (_demand("diversity: 1.5"), 8, "demand 'D1'", r"diversity must be a whole number, got 1.5"),
    (_demand("diversity: 500"), 8, "demand 'D1'",
     r"diversity 500 is too large \(more than 100 link-disjoint routes\)"),
    (BASE + "demands: []\ndefaults: {diversity: 0}\n", 8, "defaults",
     r"diversity must be >= 1, got 0"),
    (BASE + "demands: []\ndefaults: {min_capacity: -1}\n", 8, "defaults",
     r"min_capacity must be >= 0, got -1"),
    (BASE + "demands: []\ndefaults: {min_capacty: 4}\n", 8, "defaults",
     r"unknown key 'min_capacty' \(did you mean 'min_capacity'\?\)"),
]


@pytest.mark.parametrize("text, line, item, problem", CASES)
def test_bad_rule_fields_one_line_each(text, line, item, problem):
    pattern = re.escape(f"inline.yaml:{line}: {item}: ") + f"({problem})"
    with pytest.raises(NetworkFileError, match=pattern) as info:
        loads_network(text, source="inline.yaml")
    assert len(info.value.problems) == 1, info.value.problems


def test_diversity_beyond_the_routes_is_not_an_input_error():
    # one route only (A-B direct, max_hops 1): read fine, reported by the sizer instead
    net = loads_network(_demand("diversity: 2") + "routing: {max_hops: 1}\n")
    assert net.demands[0].diversity == 2 and len(net.demands[0].routes) == 1


# -- choosing disjoint routes, against networkx ---------------------------------------------
@pytest.mark.parametrize("seed", range(6))
def test_most_disjoint_candidate_routes_equal_edge_connectivity(seed):
    """With every simple path as a candidate, the most link-disjoint candidate routes equal
    the local edge connectivity (Menger's theorem; networkx computes it by max flow)."""
    g = nx.gnp_random_graph(6, 0.6, seed=seed)
    lines = ["name: g", "sites: [" + ", ".join(f"S{i}" for i in g.nodes) + "]", "links:"]
    lines += [f"  - {{id: L{u}-{v}, ends: [S{u}, S{v}]}}" for u, v in g.edges]
    pairs = [(s, t) for s, t in itertools.combinations(g.nodes, 2)
             if nx.has_path(g, s, t)]
    lines += ["routing: {max_hops: 5}", "demands:"]
    lines += [f"  - {{between: [S{s}, S{t}], traffic: 1}}" for s, t in pairs]
    net = loads_network("\n".join(lines) + "\n")
    for (s, t), d in zip(pairs, net.demands, strict=True):
        conn = nx.edge_connectivity(g, s, t)
        chosen, most = disjoint_routes(d.routes, conn)
        assert len(chosen) == conn and most == conn
        links = [set(d.routes[i].links) for i in chosen]
        assert all(not (a & b) for a, b in itertools.combinations(links, 2))
        # one more than the connectivity cannot be had
        assert disjoint_routes(d.routes, conn + 1) == ((), conn)


def test_chosen_routes_have_the_fewest_links():
    # A-B direct, A-C-B, and A-D-E-B: the two disjoint routes with fewest links are the
    # direct one and A-C-B (3 links), not A-D-E-B (4 with the direct one); counted by hand.
    text = """\
name: five
sites: [A, B, C, D, E]
links:
  - {id: AB, ends: [A, B]}
  - {id: AC, ends: [A, C]}
  - {id: CB, ends: [C, B]}
  - {id: AD, ends: [A, D]}
  - {id: DE, ends: [D, E]}
  - {id: EB, ends: [E, B]}
routing: {max_hops: 3}
demands:
  - {between: [A, B], traffic: 1}
"""
    net = loads_network(text)
    d = net.demands[0]
    chosen, _ = disjoint_routes(d.routes, 2)
    ids = sorted(tuple(net.links[j].id for j in d.routes[i].links) for i in chosen)
    assert ids == [("AB",), ("AC", "CB")]


# -- the sizer ------------------------------------------------------------------------------
ONE = """\
name: one
sites: [A, B]
links:
  - {{id: AB, ends: [A, B]{extra}}}
demands:
  - {{between: [A, B], traffic: 0.4, target: 0.01}}
"""


def test_min_capacity_forces_a_larger_group():
    need = fewest_circuits(0.4, 0.01)  # Erlang B by mpmath
    assert need == 3
    free = dimension(loads_network(ONE.format(extra="")))
    assert int(free.capacities[0]) == need
    plan = dimension(loads_network(ONE.format(extra=", min_capacity: 8")))
    assert int(plan.capacities[0]) == 8
    assert plan.rules_met and plan.feasible
    assert plan.to_dict()["rules"] == [{"rule": "min_capacity", "item": "link 'AB'",
                                        "met": True, "why": "built with 8 >= 8 units"}]
    # the bound is computed without the rule, so it may lie below the cost; never above
    assert plan.lower_bound <= plan.cost


def test_min_capacity_rounds_up_to_whole_modules():
    plan = dimension(loads_network(ONE.format(extra=", min_capacity: 8, module: 5")))
    assert int(plan.capacities[0]) == 10
    assert plan.rules_met


TRIANGLE = """\
name: triangle
sites: [A, B, C]
links:
  - {id: AB, ends: [A, B], fixed_cost: 5}
  - {id: AC, ends: [A, C], fixed_cost: 50, min_capacity: 4}
  - {id: CB, ends: [C, B], fixed_cost: 50}
demands:
  - {between: [A, B], traffic: 2, target: 0.01%s}
"""


def _built_graph(net, caps):
    g = nx.MultiGraph()
    g.add_nodes_from(s.id for s in net.sites)
    for link, c in zip(net.links, caps, strict=True):
        if c > 0:
            g.add_edge(*link.ends)
    return g


def test_diversity_keeps_the_tandem_built():
    free_net = loads_network(TRIANGLE % "")
    free = dimension(free_net)
    # the cheaper plan leaves the dear tandem out: A and B joined by one link only
    assert nx.edge_connectivity(nx.Graph(_built_graph(free_net, free.capacities)),
                                "A", "B") == 1
    net = loads_network(TRIANGLE % ", diversity: 2")
    plan = dimension(net)
    caps = [int(c) for c in plan.capacities]
    assert all(c > 0 for c in caps), caps
    assert caps[1] >= 4  # AC is built, so at its min_capacity
    assert nx.edge_connectivity(nx.Graph(_built_graph(net, plan.capacities)), "A", "B") >= 2
    assert plan.rules_met and plan.feasible
    assert plan.cost > free.cost
    rules = {r["item"]: r for r in plan.to_dict()["rules"]}
    assert rules["demand 'A-B'"]["met"] is True


def test_diversity_that_cannot_be_met_is_reported(tmp_path, capsys):
    text = (ONE.format(extra="").replace("target: 0.01", "target: 0.01, diversity: 2"))
    net = loads_network(text)
    plan = dimension(net)
    assert plan.feasible and not plan.rules_met
    (why,) = [r.why for r in plan.rules if not r.met]
    assert why == ("demand 'A-B': only 1 link-disjoint candidate route, diversity 2 "
                   "cannot be met")
    path = tmp_path / "one.yaml"
    path.write_text(text)
    assert main(["size", str(path), "--quiet"]) == 1
    out, err = capsys.readouterr()
    assert "rule not met   demand 'A-B': only 1 link-disjoint candidate route" in out
    assert "netdim size: design rule not met: demand 'A-B'" in err


def test_check_rules_names_a_group_below_its_minimum():
    net = loads_network(ONE.format(extra=", min_capacity: 8"))
    (rule,) = check_rules(net, SizingChoices.from_network(net), [3])
    assert not rule.met
    assert rule.why == "link 'AB': built with 3 units, below min_capacity 8"


ALTERNATE = """\
name: alt
sites: [A, B, C, D]
routing: {policy: alternate}
defaults: {min_capacity: 6}
links:
  - {id: AB, ends: [A, B]}
  - {id: AC, ends: [A, C], fixed_cost: 20}
  - {id: CB, ends: [C, B], fixed_cost: 20}
  - {id: AD, ends: [A, D], fixed_cost: 20}
  - {id: DB, ends: [D, B], fixed_cost: 20}
demands:
  - {between: [A, B], traffic: 5, diversity: 3}
  - {between: [A, C], traffic: 0.2}
"""


def test_rules_under_alternate_routing():
    net = loads_network(ALTERNATE)
    plan = dimension(net)
    caps = [int(c) for c in plan.capacities]
    # min_capacity from the defaults: every built group has at least 6 units
    assert all(c == 0 or c >= 6 for c in caps), caps
    # diversity 3 between A and B: networkx's edge connectivity of the built links
    assert nx.edge_connectivity(nx.Graph(_built_graph(net, caps)), "A", "B") >= 3
    assert plan.rules_met and plan.feasible and len(plan.rules) == 6


def test_no_rules_no_entries():
    plan = dimension(loads_network(ONE.format(extra="")))
    d = plan.to_dict()
    assert d["rules"] == [] and d["rules_met"] is True


@pytest.mark.slow
def test_rules_kept_by_a_verified_plan():
    # the simulation's calibration re-sizes; the rules are judged again on its plan
    net = loads_network(TRIANGLE % ", diversity: 2")
    plan = dimension(net, verify="simulate")
    caps = [int(c) for c in plan.capacities]
    assert all(c > 0 for c in caps) and caps[1] >= 4, caps
    assert plan.rules_met
    assert nx.edge_connectivity(nx.Graph(_built_graph(net, caps)), "A", "B") >= 2

"""Generated candidate routes, checked against networkx's own path enumeration.

Outside checks: networkx.all_simple_paths / all_simple_edge_paths with a cutoff (networkx 3.x,
an independent implementation of simple-path enumeration), on a real topology from the
Internet Topology Zoo (NSFNET, 13 sites, 15 links; Knight et al., "The Internet Topology Zoo",
IEEE JSAC 29(9), 2011; file /work/shared/data/real/topozoo-Nsfnet.json, see SOURCES.md there)
and on SNDlib polska (12 sites, 18 links; Orlowski et al., "SNDlib 1.0", Networks 55(3), 2010).
The order rules (hops, then length, then cost, then ids) are the documented contract.
"""

import json
import pathlib
import random

import networkx as nx
import pytest

from netdim.model import Link, Network, Site
from netdim.routing import RouteFinder, RouteLimitError, candidate_routes, check_path, link_graph

# The open datasets live in shared/ beside the checkout (CI lays a copy there).
_CANDIDATES = [
    pathlib.Path(__file__).resolve().parents[2] / "shared" / "data" / "real",
    pathlib.Path("/work/shared/data/real"),
]
REAL = next((p for p in _CANDIDATES if p.is_dir()), _CANDIDATES[0])


def real_links(name):
    path = REAL / f"{name}.json"
    # The open datasets ship with the workplace's shared/ folder: a missing file is a failure.
    assert path.exists(), f"{path} not found: the open datasets in shared/data/real are needed"
    data = json.loads(path.read_text())
    links = [
        Link(link["id"], tuple(link["ends"]), length=link["length_km"]) for link in data["links"]
    ]
    return [s["id"] for s in data["sites"]], links


@pytest.mark.parametrize("name", ["topozoo-Nsfnet", "sndlib-polska"])
@pytest.mark.parametrize("max_hops", [1, 2, 3, 4])
def test_same_path_set_as_networkx(name, max_hops):
    sites, links = real_links(name)
    g = link_graph(links, sites)
    simple = nx.Graph()  # these files have no parallel links: compare site sequences
    simple.add_edges_from(link.ends for link in links)
    ends_of = {link.id: link.ends for link in links}
    for origin in sites[:5]:
        for dest in sites:
            if dest == origin:
                continue
            routes = candidate_routes(g, origin, dest, max_hops)
            # source: networkx all_simple_paths with cutoff (independent enumeration)
            expected = {tuple(p) for p in nx.all_simple_paths(simple, origin, dest,
                                                              cutoff=max_hops)}
            got = set()
            for route in routes:
                here, seq = origin, [origin]
                for lid in route:
                    a, b = ends_of[lid]
                    assert here in (a, b)
                    here = b if a == here else a
                    seq.append(here)
                assert here == dest
                got.add(tuple(seq))
            assert got == expected
            assert len(routes) == len(expected)


def test_order_hops_then_length():
    sites, links = real_links("topozoo-Nsfnet")
    g = link_graph(links, sites)
    length = {link.id: link.length for link in links}
    origin, dest = sites[0], sites[-1]
    routes = candidate_routes(g, origin, dest, 5)
    keys = [(len(r), sum(length[k] for k in r)) for r in routes]
    assert keys == sorted(keys)
    assert len(routes) > 3


def toy(parallel=True):
    # invented toy topology for the order rules (the rules are the documented contract)
    sites = tuple(Site(s) for s in "ABCD")
    links = [
        Link("A-C", ("A", "C"), length=1.0),
        Link("C-B", ("C", "B"), length=1.0),
        Link("A-D", ("A", "D"), length=1.0, cost_per_module=2.0),
        Link("D-B", ("D", "B"), length=1.0),
        Link("A-B/2", ("A", "B"), length=5.0),
        Link("A-B/1", ("A", "B"), length=5.0),
        Link("C-D", ("C", "D"), length=0.1),
    ]
    if parallel:
        links.append(Link("A-B/0", ("A", "B"), length=3.0))
    return Network("toy", sites, tuple(links), ())


def test_direct_links_first_parallel_links_separate():
    net = toy()
    routes = candidate_routes(net, "A", "B", 3)
    # direct: shorter first, then equal length by id
    assert routes[:3] == [("A-B/0",), ("A-B/1",), ("A-B/2",)]
    # two-hop: equal length 2, A-C-B is cheaper (cost 2) than A-D-B (cost 3)
    assert routes[3:5] == [("A-C", "C-B"), ("A-D", "D-B")]
    # three-hop via C-D (length 2.1) both ways
    assert set(routes[5:]) == {("A-C", "C-D", "D-B"), ("A-D", "C-D", "C-B")}
    assert routes[5] == ("A-C", "C-D", "D-B")  # cost 3 < cost 4
    assert len(routes) == 7


def test_max_routes_and_hops():
    net = toy()
    assert candidate_routes(net, "A", "B", 1) == [("A-B/0",), ("A-B/1",), ("A-B/2",)]
    assert candidate_routes(net, "A", "B", 3, max_routes=4) == [
        ("A-B/0",), ("A-B/1",), ("A-B/2",), ("A-C", "C-B"),
    ]
    # the fast two-hop path agrees with the general enumeration cut at two hops
    assert candidate_routes(net, "A", "B", 2) == [
        r for r in candidate_routes(net, "A", "B", 3) if len(r) <= 2
    ]
    assert candidate_routes(net, "B", "A", 2)[3] == ("C-B", "A-C")


def test_no_path_gives_empty():
    sites = (Site("A"), Site("B"), Site("C"))
    net = Network("x", sites, (Link("A-B", ("A", "B")),), ())
    assert candidate_routes(net, "A", "C", 4) == []


@pytest.mark.parametrize(
    "args, match",
    [
        (("A", "Z", 2), "dest: site 'Z' is not in the network"),
        (("A", "A", 2), "origin and dest are the same site 'A'"),
        (("A", "B", 0), "max_hops: must be an integer >= 1"),
        (("A", "B", 2, 0), "max_routes: must be an integer >= 1"),
    ],
)
def test_bad_arguments(args, match):
    with pytest.raises(ValueError, match=match):
        candidate_routes(toy(), *args)


def brute_force_routes(links, origin, dest, max_hops):
    """Every loop-free link sequence from origin to dest, by plain depth-first search.

    Written here, independent of networkx and of netdim.routing (parallel links included).
    """
    found = []

    def walk(here, used, visited):
        if here == dest:
            found.append(tuple(used))
            return
        if len(used) == max_hops:
            return
        for link in links:
            if here in link.ends:
                there = link.ends[1] if link.ends[0] == here else link.ends[0]
                if there not in visited:
                    walk(there, used + [link.id], visited | {there})

    walk(origin, [], {origin})
    return found


@pytest.mark.parametrize("max_hops", [1, 2, 3, 4])
def test_same_routes_as_brute_force_with_parallel_links(max_hops):
    net = toy()
    for origin in "ABCD":
        for dest in "ABCD":
            if origin == dest:
                continue
            got = candidate_routes(net, origin, dest, max_hops)
            expected = brute_force_routes(net.links, origin, dest, max_hops)
            assert sorted(got) == sorted(expected)
            assert len(set(got)) == len(got)


def sorted_by_contract(graph, origin, dest, max_hops):
    """Every simple path by networkx.all_simple_edge_paths (independent enumeration), sorted
    by the documented order: hops, total length, total cost per module, link ids."""
    adj = graph.adj
    keyed = []
    for path in nx.all_simple_edge_paths(graph, origin, dest, cutoff=max_hops):
        data = [adj[u][v][k] for u, v, k in path]
        keyed.append((len(path), sum(d["length"] or 0.0 for d in data),
                      sum(d["cost_per_module"] for d in data), tuple(k for _, _, k in path)))
    keyed.sort()
    return [item[3] for item in keyed]


@pytest.mark.parametrize("name", ["topozoo-Nsfnet", "sndlib-polska"])
@pytest.mark.parametrize("max_routes", [1, 2, 3, 5, None])
def test_stopped_at_k_equals_first_k_of_every_path(name, max_routes):
    sites, links = real_links(name)
    g = link_graph(links, sites)
    finder = RouteFinder(g, 6, max_routes)
    for origin in sites[:6]:
        for dest in sites:
            if dest == origin:
                continue
            every = sorted_by_contract(g, origin, dest, 6)
            expected = every if max_routes is None else every[:max_routes]
            assert finder.routes(origin, dest) == expected


def test_parallel_links_stopped_at_k():
    net = toy()
    g = net.to_graph()
    for k in range(1, 8):
        assert candidate_routes(g, "A", "B", 3, max_routes=k) == sorted_by_contract(
            g, "A", "B", 3)[:k]


def ladder(n):
    """A ladder of n rungs (2n sites): the number of simple paths grows fast with n."""
    sites = [f"{side}{i}" for i in range(n) for side in "LR"]
    links = [Link(f"R{i}", (f"L{i}", f"R{i}")) for i in range(n)]
    links += [Link(f"{side}{i}-{i + 1}", (f"{side}{i}", f"{side}{i + 1}"))
              for i in range(n - 1) for side in "LR"]
    return sites, links


def test_work_limits_refuse_with_the_way_round():
    sites, links = ladder(12)
    g = link_graph(links, sites)
    finder = RouteFinder(g, 20, None, max_candidates=50)
    with pytest.raises(RouteLimitError, match=r"more than 50 routes for routes of at most 20 "
                       r"links \(the limit on generated routes\); set routing.max_routes, "
                       r"lower routing.max_hops, or give this demand's routes"):
        finder.routes("L0", "R11")
    with pytest.raises(RouteLimitError, match=r"more than 100 search steps"):
        RouteFinder(g, 20, None, max_steps=100).routes("L0", "R11")
    # with max_routes the same demand is quick: only the shortest paths are looked at
    assert RouteFinder(g, 20, 2, max_candidates=50).routes("L0", "R11") == [
        ("L0-1", "L1-2", "L2-3", "L3-4", "L4-5", "L5-6", "L6-7", "L7-8", "L8-9", "L9-10",
         "L10-11", "R11"),
        ("L0-1", "L1-2", "L2-3", "L3-4", "L4-5", "L5-6", "L6-7", "L7-8", "L8-9", "L9-10",
         "R10", "R10-11"),
    ]


def test_routes_many_keeps_the_order_and_the_errors():
    sites, links = ladder(12)
    g = link_graph(links, sites)
    finder = RouteFinder(g, 20, None, max_candidates=50)
    out = finder.routes_many([("L1", "L0"), ("L0", "R11"), ("R0", "L0")])
    # 10 routes each (networkx's enumeration), in the documented order; 2036 for L0-R11
    assert out[0] == sorted_by_contract(g, "L1", "L0", 20) and len(out[0]) == 10
    assert isinstance(out[1], RouteLimitError)
    assert out[2] == sorted_by_contract(g, "R0", "L0", 20) and out[2][0] == ("R0",)


@pytest.mark.parametrize("route, problem", [
    ((0, 1), None),
    ((1, 0), None),  # may start at either end
    ((4,), "first link 'B-D' does not touch 'A' or 'C'"),
    ((1,), "ends at 'B', not at 'A'"),
    ((0, 2), "link 'A-C' does not continue from site 'B'"),
    ((0, 3, 2), "visits site 'A' twice"),
    ((0,), "ends at 'B', not at 'C'"),
])
def test_check_path(route, problem):
    # invented triangle with a parallel link (the rules are the documented contract)
    links = [Link("A-B", ("A", "B")), Link("B-C", ("B", "C")), Link("A-C", ("A", "C")),
             Link("B-A", ("B", "A")), Link("B-D", ("B", "D"))]
    got = check_path(links, route, ("A", "C"))
    if problem is None:
        assert got is None
    else:
        assert got.startswith(problem)


@pytest.mark.parametrize("seed", range(6))
def test_search_by_bound_equals_first_k_of_every_path_on_random_multigraphs(seed):
    """The search filed by hop bound (max_routes set, max_hops > 2) against networkx's
    independent enumeration of every simple path, sorted by the documented order, on sparse
    random multigraphs with parallel links and dead ends."""
    rng = random.Random(seed)
    n = 14
    sites = [f"N{i}" for i in range(n)]
    links = []
    for i in range(n + 6):
        a, b = rng.sample(range(n), 2)
        for p in range(rng.choice((1, 1, 1, 2))):
            links.append(Link(f"E{i}/{p}", (sites[a], sites[b]),
                              length=float(rng.randint(1, 3)),
                              cost_per_module=float(rng.randint(1, 2))))
    g = link_graph(links, sites)
    for k in (1, 2, 4, 7):
        finder = RouteFinder(g, 7, k)
        for origin in sites[:5]:
            for dest in sites:
                if dest != origin:
                    assert finder.routes(origin, dest) == sorted_by_contract(
                        g, origin, dest, 7)[:k]

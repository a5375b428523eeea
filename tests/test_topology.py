"""netdim.topology: reading GraphML/GML, the traffic models, the network-file text.

Check values come from outside the library:

- Site and link counts: networkx's own reading of the same file (``nx.read_graphml``), with
  self-loops, parallel edges and nodes without edges counted by networkx functions.
- Lengths: the haversine formula (R. W. Sinnott, "Virtues of the Haversine", Sky and
  Telescope 68(2):159, 1984) written out here, with the IUGG mean Earth radius 6371.0088 km
  (H. Moritz, "Geodetic Reference System 1980", 1980); and the lengths in the shared data's
  own conversion (tests/data/topozoo-*.json, haversine, rounded to 1 m).
- Gravity traffic: the model's formula T_ij = E w_i w_j f(d_ij) / sum (M. Roughan,
  "Simplifying the synthesis of Internet traffic matrices", CCR 35(5), 2005) computed here.
- SNDlib demand values: read here from the XML with ElementTree (tests/data/SOURCES.md).
- Small graphs built in the tests are bookkeeping cases, counted by hand.

The real topologies are from the Internet Topology Zoo (Knight et al., IEEE JSAC 29(9), 2011;
CC BY 4.0; see networks/SOURCES.md).
"""

from __future__ import annotations

import csv
import itertools
import json
import math
import os
import pathlib
import re
import xml.etree.ElementTree as ET

import networkx as nx
import pytest
import yaml

from netdim import dimension
from netdim.errors import NetworkFileError
from netdim.netfile import read_network
from netdim.topology import (
    EARTH_RADIUS_KM,
    DemandTable,
    Gravity,
    LinkCosts,
    Uniform,
    great_circle_km,
    import_topology,
    pair_traffic,
    read_topology,
    write_text,
)
from netdim.topology.emit import WIDTH, flow_item, scalar

HERE = pathlib.Path(__file__).resolve().parent
NETWORKS = HERE.parent / "networks"
DATA = HERE / "data"
SHARED = DATA  # copies of the shared data's conversion, see tests/data/SOURCES.md
ZOO = ("Abilene", "Janetbackbone", "Ntt")
SND = "{http://sndlib.zib.de/network}"


def haversine_km(lon1, lat1, lon2, lat2, r=6371.0088):
    # Sinnott (1984): d = 2 R asin(sqrt(hav(dphi) + cos phi1 cos phi2 hav(dlambda)))
    p1, p2 = math.radians(lat1), math.radians(lat2)
    h = (math.sin((p2 - p1) / 2) ** 2
         + math.cos(p1) * math.cos(p2) * math.sin(math.radians(lon2 - lon1) / 2) ** 2)
    return 2 * r * math.asin(math.sqrt(h))


def zoo(name):
    return NETWORKS / f"topozoo-{name}.graphml"


def write_graphml(tmp_path, graph, name="g.graphml"):
    path = tmp_path / name
    nx.write_graphml(graph, path)
    return path


# --------------------------------------------------------------------------------------------
# great-circle distance
# --------------------------------------------------------------------------------------------
def test_great_circle_matches_geometry_and_haversine():
    # a quarter of a great circle is pi R / 2 (geometry)
    assert great_circle_km(0, 0, 90, 0) == pytest.approx(math.pi * EARTH_RADIUS_KM / 2, 1e-12)
    assert great_circle_km(10, -90, -170, 90) == pytest.approx(math.pi * EARTH_RADIUS_KM, 1e-12)
    assert great_circle_km(3.5, 47.0, 3.5, 47.0) == 0.0
    pts = [(-74.00597, 40.71427), (139.5813, 35.61488), (151.20732, -33.86785),
           (-0.12574, 51.50853), (-0.12575, 51.50853), (179.9, 0.0), (-179.9, 0.0)]
    for (a, b), (c, d) in itertools.combinations(pts, 2):
        assert great_circle_km(a, b, c, d) == pytest.approx(haversine_km(a, b, c, d),
                                                            rel=1e-9, abs=1e-9)


@pytest.mark.parametrize("name", ZOO)
def test_link_lengths_against_haversine_and_the_shared_conversion(name):
    topo = read_topology(zoo(name))
    g = nx.read_graphml(zoo(name))
    pos = {str(n): (a.get("Longitude"), a.get("Latitude")) for n, a in g.nodes(data=True)}
    node_of = {s.id: s.node for s in topo.sites}
    shared = json.loads((SHARED / f"topozoo-{name}.json").read_text())
    by_labels = {frozenset(link["ends"]): link["length_km"] for link in shared["links"]}
    label_of = {s.id: s.name or s.id for s in topo.sites}
    checked = 0
    for link in topo.links:
        (lo1, la1), (lo2, la2) = (pos[node_of[e]] for e in link.ends)
        ref = by_labels[frozenset(label_of[e] for e in link.ends)]
        if lo1 is None or lo2 is None:
            assert link.length is None and ref is None
            continue
        assert link.length == pytest.approx(haversine_km(lo1, la1, lo2, la2), abs=1e-6)
        assert link.length == pytest.approx(ref, abs=6e-4)  # the JSON rounds to 1 m
        checked += 1
    assert checked >= len(topo.links) - 2


# --------------------------------------------------------------------------------------------
# reading the shipped topologies: counts against networkx
# --------------------------------------------------------------------------------------------
@pytest.mark.parametrize("name", ZOO)
def test_counts_match_networkx(name):
    g = nx.read_graphml(zoo(name))
    simple = nx.Graph(g)
    simple.remove_edges_from(list(nx.selfloop_edges(simple)))
    isolated = set(nx.isolates(simple))
    simple.remove_nodes_from(isolated)
    topo = read_topology(zoo(name))
    assert (topo.nodes, topo.edges) == (g.number_of_nodes(), g.number_of_edges())
    assert len(topo.sites) == simple.number_of_nodes()
    assert len(topo.links) == simple.number_of_edges()
    assert {s.node for s in topo.sites} == set(simple.nodes)
    assert {frozenset((topo_site_node(topo, a), topo_site_node(topo, b)))
            for a, b in (link.ends for link in topo.links)} == {
        frozenset(e) for e in simple.edges}
    assert sum(link.edges for link in topo.links) == g.number_of_edges()
    what = {f.what: len(f.items) for f in topo.findings}
    if isolated:
        assert what["isolated_nodes"] == len(isolated)
    extra = g.number_of_edges() - nx.Graph(g).number_of_edges()
    if extra:
        assert sum(int(re.search(r"\(\+(\d+)\)", i).group(1))
                   for f in topo.findings if f.what == "parallel_edges" for i in f.items) == extra
    no_xy = [str(n) for n, a in g.nodes(data=True) if "Latitude" not in a and n not in isolated]
    assert sorted(s.node for s in topo.sites if not s.located) == sorted(no_xy)


def topo_site_node(topo, site_id):
    return next(s.node for s in topo.sites if s.id == site_id)


def test_ntt_findings_name_what_was_dropped():
    topo = read_topology(zoo("Ntt"))
    f = {x.what: x for x in topo.findings}
    assert f["isolated_nodes"].action == "dropped"
    assert "dropped 15 node(s) without edges" in f["isolated_nodes"].message
    assert "(Cairo)" in f["isolated_nodes"].message
    assert f["parallel_edges"].message.startswith(
        "merged 153 parallel edge(s) into the link they duplicate, on 51 link(s)")
    # 216 - 153 = 63 links (networkx: nx.Graph(g).number_of_edges())
    assert len(topo.links) == 63


def test_janet_dublin_has_no_position_and_its_links_no_length():
    topo = read_topology(zoo("Janetbackbone"))
    dublin = next(s for s in topo.sites if s.name == "Dublin")
    assert not dublin.located
    assert [link.id for link in topo.links if link.length is None] == [
        link.id for link in topo.links if dublin.id in link.ends]
    f = next(x for x in topo.findings if x.what == "no_coordinates")
    assert f.items == ("Dublin",) and f.action == "guessed"


def test_gml_reads_like_graphml(tmp_path):
    g = nx.read_graphml(zoo("Abilene"))
    # GML as the Zoo writes it: numeric ids, the name in 'label' (networkx writes the node
    # key as the label)
    g = nx.relabel_nodes(g, {n: a.pop("label") for n, a in g.nodes(data=True)})
    gml = tmp_path / "abilene.gml"
    nx.write_gml(g, gml)
    assert 'label "New York"' in gml.read_text()
    a, b = read_topology(zoo("Abilene")), read_topology(gml)
    assert b.format == "gml"
    assert [(s.id, s.name, s.lon, s.lat) for s in a.sites] == [
        (s.id, s.name, s.lon, s.lat) for s in b.sites]
    assert {(frozenset(x.ends), round(x.length, 9)) for x in a.links} == {
        (frozenset(x.ends), round(x.length, 9)) for x in b.links}


# --------------------------------------------------------------------------------------------
# small graphs: what is dropped, merged and guessed (counted by hand)
# --------------------------------------------------------------------------------------------
def messy_graph():
    g = nx.MultiGraph(name="messy")
    g.add_node("a", label="North Gate", Longitude=0.0, Latitude=0.0)
    g.add_node("b", label="Mill", Longitude=1.0, Latitude=0.0)
    g.add_node("c", label="Mill", Longitude=1.0, Latitude=1.0)      # label shared with b
    g.add_node("d", Longitude=400.0, Latitude=0.0)                 # out of range, no label
    g.add_node("e", label="Lone")                                  # no edges
    g.add_node("f", label="Islet", Longitude=5.0, Latitude=5.0)    # second part
    g.add_node("g", label="Skerry", Longitude=5.0, Latitude=6.0)
    g.add_edges_from([("a", "b"), ("a", "b"), ("b", "c"), ("c", "c"), ("c", "d"), ("a", "d"),
                      ("f", "g")])
    return g


def test_messy_graph_is_tidied_and_every_change_said(tmp_path):
    path = write_graphml(tmp_path, messy_graph())
    topo = read_topology(path)
    assert [s.id for s in topo.sites] == ["North_Gate", "Mill#b", "Mill#c", "d"]
    assert [s.name for s in topo.sites] == ["North Gate", "Mill", "Mill", None]
    assert [x.id for x in topo.links] == ["North_Gate-Mill#b", "North_Gate-d", "Mill#b-Mill#c",
                                           "Mill#c-d"]
    assert [x.edges for x in topo.links] == [2, 1, 1, 1]
    assert topo.links[0].length == pytest.approx(haversine_km(0, 0, 1, 0), abs=1e-9)
    assert topo.links[1].length is None   # d has no usable coordinates
    f = {x.what: x for x in topo.findings}
    assert set(f) == {"self_loops", "parallel_edges", "isolated_nodes", "other_parts",
                      "no_coordinates"}
    assert f["self_loops"].message == "dropped 1 self-loop(s) (edges from a node to itself): " \
                                      "node c (Mill)"
    assert f["parallel_edges"].items == ("North_Gate-Mill#b (+1)",)
    assert f["isolated_nodes"].items == ("e (Lone)",)
    assert f["other_parts"].items == ("f (Islet)", "g (Skerry)")
    assert "(2 node(s), 1 edge(s))" in f["other_parts"].message
    assert f["no_coordinates"].items == ("d",)
    assert "1 of them had values out of range or not numbers" in f["no_coordinates"].message
    assert topo.dropped_nodes == (("e", "Lone", "no edges"),
                                  ("f", "Islet", "not joined to the largest part"),
                                  ("g", "Skerry", "not joined to the largest part"))


def test_all_parts_keeps_both_parts_and_pairs_stay_within(tmp_path):
    path = write_graphml(tmp_path, messy_graph())
    topo = read_topology(path, all_parts=True)
    assert [s.id for s in topo.sites][-2:] == ["Islet", "Skerry"] and topo.parts == 2
    f = {x.what: x for x in topo.findings}
    assert "other_parts" not in f
    assert f["several_parts"].message == ("kept 2 parts not joined to each other; demands only "
                                          "within a part")
    demands, _, _ = pair_traffic(topo, Uniform(2.0))
    # 4 sites in the first part (6 pairs) and 2 in the second (1 pair)
    assert len(demands) == 7 and ("Islet", "Skerry") in [d.between for d in demands]


def test_node_ids_and_named_coordinates(tmp_path):
    g = nx.Graph()
    g.add_node("n1", label="A", east=10.0, north=50.0)
    g.add_node("n2", label="B", east=11.0, north=50.0)
    g.add_edge("n1", "n2")
    path = write_graphml(tmp_path, g)
    topo = read_topology(path, site_ids="node", coordinates=("east", "north"))
    assert [s.id for s in topo.sites] == ["n1", "n2"]
    assert topo.links[0].length == pytest.approx(haversine_km(10, 50, 11, 50), abs=1e-9)
    assert read_topology(path).links[0].length is None   # not found by the usual names


def test_directed_file_merges_the_two_directions(tmp_path):
    g = nx.MultiDiGraph()
    g.add_edges_from([("x", "y"), ("y", "x"), ("x", "y"), ("y", "z")])
    topo = read_topology(write_graphml(tmp_path, g))
    assert topo.directed and len(topo.links) == 2
    f = {x.what: x for x in topo.findings}
    assert f["reverse_edges"].items == ("x-y (+1)",)
    assert f["parallel_edges"].items == ("x-y (+1)",)


@pytest.mark.parametrize("text, match", [
    ("<graphml><graph", r"g\.graphml: cannot read as GraphML: "),
    ("<graphml xmlns='http://graphml.graphdrawing.org/xmlns'><graph edgedefault='undirected'>"
     "<node id='a'/></graph></graphml>", r"g\.graphml: has 1 node\(s\); a network needs"),
    ("<graphml xmlns='http://graphml.graphdrawing.org/xmlns'><graph edgedefault='undirected'>"
     "<node id='a'/><node id='b'/><edge source='a' target='a'/></graph></graphml>",
     r"g\.graphml: has no edge between two different nodes"),
])
def test_bad_graphml_is_one_line_naming_the_file(tmp_path, text, match):
    path = tmp_path / "g.graphml"
    path.write_text(text)
    with pytest.raises(NetworkFileError, match=match):
        read_topology(path)


def test_bad_gml_missing_file_and_unknown_suffix(tmp_path):
    path = tmp_path / "g.gml"
    path.write_text("graph [ node [ id 1 ] node [ id 1 ] ]")
    with pytest.raises(NetworkFileError, match=r"g\.gml: cannot read as GML: .*1"):
        read_topology(path)
    with pytest.raises(NetworkFileError, match=r"nope\.graphml: cannot read: No such file"):
        read_topology(tmp_path / "nope.graphml")
    with pytest.raises(ValueError, match=r"g\.txt: cannot tell the format from the name"):
        read_topology(tmp_path / "g.txt")
    with pytest.raises(ValueError, match="format: must be 'graphml' or 'gml'"):
        read_topology(path, format="dot")
    with pytest.raises(ValueError, match="site_ids: must be 'label' or 'node'"):
        read_topology(path, site_ids="name")
    with pytest.raises(ValueError, match="coordinates: must be two attribute names"):
        read_topology(path, coordinates=("lon",))


# --------------------------------------------------------------------------------------------
# traffic models
# --------------------------------------------------------------------------------------------
def test_gravity_equal_and_degree_weights_follow_the_formula():
    topo = read_topology(zoo("Abilene"))
    pairs = list(itertools.combinations(topo.sites, 2))
    demands, _, text = pair_traffic(topo, Gravity(300.0))
    assert len(demands) == 55 and "equal weights" in text
    for d in demands:
        assert d.erlangs == pytest.approx(300.0 / 55)
    g = nx.Graph(nx.read_graphml(zoo("Abilene")))
    deg = {str(n): g.degree(n) for n in g}
    raw = [deg[a.node] * deg[b.node] for a, b in pairs]
    demands, _, text = pair_traffic(topo, Gravity(300.0, weight="degree"))
    assert "by degree" in text
    assert [d.erlangs for d in demands] == pytest.approx([300.0 * x / sum(raw) for x in raw])


def test_gravity_attribute_weights_decay_and_pairs(tmp_path):
    g = nx.Graph()
    places = [("p", 100.0, 0.0, 50.0), ("q", 300.0, 1.0, 50.0), ("r", 50.0, 2.0, 51.0),
              ("s", 0.0, 0.5, 49.0)]
    for n, pop, lon, lat in places:
        g.add_node(n, label=n.upper(), population=pop, Longitude=lon, Latitude=lat)
    g.add_edges_from([("p", "q"), ("q", "r"), ("r", "s"), ("s", "p")])
    topo = read_topology(write_graphml(tmp_path, g))
    ref = {}
    for (a, wa, lo1, la1), (b, wb, lo2, la2) in itertools.combinations(places, 2):
        ref[(a.upper(), b.upper())] = wa * wb * math.exp(-haversine_km(lo1, la1, lo2, la2) / 80)
    demands, found, text = pair_traffic(
        topo, Gravity(90.0, weight_attribute="population", decay_km=80.0))
    total = sum(ref.values())
    assert {d.between: d.erlangs for d in demands} == pytest.approx(
        {k: 90 * v / total for k, v in ref.items() if v > 0})
    assert "from the node attribute 'population'" in text and "exp(-distance / 80 km)" in text
    assert [f.what for f in found] == ["zero_traffic"]   # S has population 0: 3 pairs left out
    top2 = sorted(ref, key=ref.get, reverse=True)[:2]
    demands, _, text = pair_traffic(
        topo, Gravity(90.0, weight_attribute="population", decay_km=80.0, pairs=2))
    kept = {d.between: d.erlangs for d in demands}
    assert set(kept) == set(top2)
    assert sum(kept.values()) == pytest.approx(90.0)
    assert "the 2 largest of 6 pairs kept" in text


def test_gravity_decay_guesses_the_distance_of_unplaced_sites():
    topo = read_topology(zoo("Janetbackbone"))
    _, found, _ = pair_traffic(topo, Gravity(100.0, decay_km=300.0))
    f = next(x for x in found if x.what == "pair_distance")
    assert len(f.items) == 28 and all("Dublin" in i for i in f.items)   # 29 sites, 1 unplaced
    assert "the median of the others" in f.message


def test_gravity_errors(tmp_path):
    g = nx.Graph()
    g.add_node("a", population=5)
    g.add_node("b", population="many")
    g.add_node("c")
    g.add_edges_from([("a", "b"), ("b", "c")])
    topo = read_topology(write_graphml(tmp_path, g))
    with pytest.raises(NetworkFileError) as err:
        pair_traffic(topo, Gravity(10.0, weight_attribute="population"))
    assert err.value.problems == [
        f"{topo.source}: node 'b': weight attribute 'population' must be a number >= 0, got "
        "'many'",
        f"{topo.source}: node 'c': weight attribute 'population' is missing (every site needs "
        "one)",
    ]
    with pytest.raises(ValueError, match="no two sites have coordinates"):
        pair_traffic(topo, Gravity(10.0, decay_km=5.0))
    g2 = nx.Graph()
    g2.add_node("a", w=0)
    g2.add_node("b", w=0)
    g2.add_edge("a", "b")
    topo2 = read_topology(write_graphml(tmp_path, g2, "z.graphml"))
    with pytest.raises(ValueError, match="gravity traffic is zero for every pair"):
        pair_traffic(topo2, Gravity(10.0, weight_attribute="w"))


@pytest.mark.parametrize("kwargs, match", [
    ({"total": 0}, r"total: must be a finite number > 0, got 0"),
    ({"total": float("nan")}, r"total: must be a finite number > 0"),
    ({"total": 2e7}, r"total: 2e\+07 erlangs is more than a network file allows"),
    ({"total": 1, "weight": "size"}, r"weight: must be one of equal, degree, got 'size'"),
    ({"total": 1, "weight_attribute": ""}, r"weight_attribute: must be an attribute name"),
    ({"total": 1, "decay_km": -1}, r"decay_km: must be a finite number > 0, got -1"),
    ({"total": 1, "pairs": 0}, r"pairs: must be a whole number >= 1, got 0"),
])
def test_gravity_options_are_checked(kwargs, match):
    with pytest.raises(ValueError, match=match):
        Gravity(**kwargs)


def test_uniform_options_are_checked():
    with pytest.raises(ValueError, match=r"per_pair: must be a finite number > 0, got -2"):
        Uniform(-2)
    with pytest.raises(ValueError, match=r"per_pair: 1e\+08 erlangs is more than"):
        Uniform(1e8)
    with pytest.raises(ValueError, match="model: expected Gravity, Uniform or DemandTable"):
        pair_traffic(read_topology(zoo("Abilene")), 3.0)


# --------------------------------------------------------------------------------------------
# demand tables, and SNDlib's demand values as a second source
# --------------------------------------------------------------------------------------------
def sndlib(name):
    """(graph with Longitude/Latitude, [(source, target, value)]) read from SNDlib XML."""
    root = ET.parse(DATA / f"sndlib-{name}.xml").getroot()
    g = nx.Graph()
    for node in root.iter(f"{SND}node"):
        g.add_node(node.get("id"), label=node.get("id"),
                   Longitude=float(node.find(f"{SND}coordinates/{SND}x").text),
                   Latitude=float(node.find(f"{SND}coordinates/{SND}y").text))
    for link in root.iter(f"{SND}link"):
        g.add_edge(link.find(f"{SND}source").text, link.find(f"{SND}target").text)
    demands = [(d.find(f"{SND}source").text, d.find(f"{SND}target").text,
                float(d.find(f"{SND}demandValue").text)) for d in root.iter(f"{SND}demand")]
    return g, demands


def sndlib_files(tmp_path, name):
    g, demands = sndlib(name)
    topo = write_graphml(tmp_path, g, f"{name}.graphml")
    table = tmp_path / f"{name}.csv"
    with table.open("w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["origin", "destination", "erlangs"])
        w.writerows(demands)
    return topo, table, g, demands


def test_sndlib_polska_demands_carried_over(tmp_path):
    topo_path, table, g, demands = sndlib_files(tmp_path, "polska")
    assert len(demands) == 66 and g.number_of_nodes() == 12   # SNDlib polska: 12 / 18 / 66
    result = import_topology(topo_path, DemandTable(str(table)))
    net = result.network
    assert len(net.demands) == 66
    assert {frozenset(d.between): d.traffic for d in net.demands} == pytest.approx(
        {frozenset((a, b)): v for a, b, v in demands})
    assert result.report.offered_traffic == pytest.approx(sum(v for _, _, v in demands))


def test_sndlib_abilene_both_directions_are_added(tmp_path):
    topo_path, table, _, demands = sndlib_files(tmp_path, "abilene")
    assert len(demands) == 132   # both directions of all 66 pairs
    want = {}
    for a, b, v in demands:
        want[frozenset((a, b))] = want.get(frozenset((a, b)), 0.0) + v
    topo = read_topology(topo_path)
    got, found, text = pair_traffic(topo, DemandTable(str(table)))
    assert {frozenset(d.between): d.erlangs for d in got} == pytest.approx(want)
    assert found[0].what == "both_directions" and len(found[0].items) == 66
    assert "66 pairs" in text


def test_table_names_sites_by_id_node_or_label(tmp_path):
    path = write_graphml(tmp_path, messy_graph())
    topo = read_topology(path)
    table = tmp_path / "t.csv"
    table.write_text("# busy hour\nErlangs,Origin,Destination,note\n"
                     "1.5,North Gate,Mill#b,label then id\n\n2,a,d,node ids\n0,c,North_Gate,\n")
    got, _, _ = pair_traffic(topo, DemandTable(str(table)))
    assert [(d.between, d.erlangs) for d in got] == [
        (("North_Gate", "Mill#b"), 1.5), (("North_Gate", "d"), 2.0),
        (("Mill#c", "North_Gate"), 0.0)]


def test_table_problems_are_file_line_and_all_reported(tmp_path):
    path = write_graphml(tmp_path, messy_graph())
    topo = read_topology(path)
    table = tmp_path / "t.csv"
    table.write_text("origin,destination,erlangs\n"
                     "North_Gate,Mill#b,x\n"          # 2
                     "Mill,d,1\n"                     # 3: label of two sites
                     "Lone,d,1\n"                     # 4: dropped
                     "Nowhere,d,1\n"                  # 5: unknown
                     "d,d,1\n"                        # 6: same site
                     "d,North_Gate,1\n"               # 7
                     "d,North_Gate,2\n"               # 8: repeat
                     "d\n"                            # 9: short
                     "Islet,d,1\n"                    # 10: other part, dropped
                     "North_Gate,d,-1\n"              # 11
                     "North_Gate,d,2e7\n")            # 12
    with pytest.raises(NetworkFileError) as err:
        pair_traffic(topo, DemandTable(str(table)))
    t = str(table)
    assert err.value.problems == [
        f"{t}:2: erlangs must be a number >= 0, got 'x'",
        f"{t}:3: origin: 'Mill' is the label of several sites (Mill#b, Mill#c): use a site id",
        f"{t}:4: origin: site 'Lone' was dropped from the topology (no edges)",
        f"{t}:5: origin: site 'Nowhere' is not in the topology",
        f"{t}:6: origin and destination are the same site 'd'",
        f"{t}:8: pair d,North_Gate already given on line 7",
        f"{t}:9: expected 3 columns, got 1",
        f"{t}:10: origin: site 'Islet' was dropped from the topology (not joined to the "
        "largest part)",
        f"{t}:11: erlangs must be a number >= 0, got '-1'",
        f"{t}:12: erlangs 2e7 is too large (more than 1e+07)",
    ]


def test_table_across_parts_and_too_many_problems(tmp_path):
    path = write_graphml(tmp_path, messy_graph())
    topo = read_topology(path, all_parts=True)
    table = tmp_path / "t.csv"
    table.write_text("origin,destination,erlangs\nIslet,d,1\n" + "d,Nowhere,1\n" * 60)
    with pytest.raises(NetworkFileError) as err:
        pair_traffic(topo, DemandTable(str(table)))
    problems = err.value.problems
    assert problems[0] == (f"{table}:2: sites 'Islet' and 'd' are in parts of the network "
                           "that no link joins")
    assert len(problems) == 51   # MAX_PROBLEMS shown, then a count of the rest
    assert problems[-1] == f"{table}: and 11 more problems not shown"


def test_table_header_and_empty_problems(tmp_path):
    topo = read_topology(zoo("Abilene"))
    bad = tmp_path / "h.csv"
    bad.write_text("from,to,erlangs\nA,B,1\n")
    with pytest.raises(NetworkFileError, match=r"h\.csv:1: the first row must name the columns "
                       r"origin, destination, erlangs; origin, destination missing"):
        pair_traffic(topo, DemandTable(str(bad)))
    bad.write_text("origin,destination,erlangs\n")
    with pytest.raises(NetworkFileError, match=r"h\.csv: no demands \(only a header\)"):
        pair_traffic(topo, DemandTable(str(bad)))
    bad.write_text("# nothing\n")
    with pytest.raises(NetworkFileError, match=r"h\.csv:1: no header row"):
        pair_traffic(topo, DemandTable(str(bad)))
    with pytest.raises(NetworkFileError, match=r"gone\.csv: cannot read: No such file"):
        pair_traffic(topo, DemandTable(str(tmp_path / "gone.csv")))
    bad.write_text("origin,destination,erlangs\nSeattle,Denvr,1\n")
    with pytest.raises(NetworkFileError, match=r"destination: site 'Denvr' is not in the "
                       r"topology \(did you mean 'Denver'\?\)"):
        pair_traffic(topo, DemandTable(str(bad)))


# --------------------------------------------------------------------------------------------
# the network-file text
# --------------------------------------------------------------------------------------------
def test_import_text_reads_back_and_is_laid_out_for_people(tmp_path):
    costs = LinkCosts(module=30, module_cost=10.0, cost_per_km=0.02, fixed_cost=5.0,
                      max_capacity=600)
    result = import_topology(zoo("Janetbackbone"), Gravity(500.0), costs=costs, target=0.02)
    text = result.text
    path = tmp_path / "janet.yaml"
    path.write_text(text)
    net = read_network(path)
    assert net == result.network
    data = yaml.safe_load(text)   # PyYAML, an independent reader of the same text
    assert list(data) == ["name", "description", "sites", "links", "demands", "defaults",
                          "routing"]
    assert data["defaults"] == {"target": 0.02}
    assert data["routing"] == {"policy": "fixed", "max_hops": 5, "max_routes": 1,
                               "reservation": 0}
    assert len(data["sites"]) == 29 and len(data["links"]) == 45 and len(data["demands"]) == 406
    assert sum(d["traffic"] for d in data["demands"]) == pytest.approx(500.0, rel=1e-5)
    median = sorted(x["length"] for x in data["links"] if "length" in x)
    for link in data["links"]:
        assert link["module"] == 30 and link["fixed_cost"] == 5.0
        assert link["max_capacity"] == 600
        assert len(median) == 43   # 45 links, 2 of them to Dublin
        km = link.get("length", median[21])
        assert link["cost_per_module"] == pytest.approx(10.0 + 0.02 * km, abs=1e-4)
    lines = text.splitlines()
    assert all(len(line) <= WIDTH for line in lines)
    header = " ".join(line.lstrip("# ") for line in lines if line.startswith("# "))
    assert header.startswith("Janet Backbone: a network file made by netdim import from "
                             "topozoo-Janetbackbone.graphml (GraphML, sha256 0e030ebed8e474d2")
    assert "1 site(s) without usable coordinates" in header and "Dublin" in header
    assert not re.search(r"\b20\d\d-\d\d-\d\d\b", text)   # no date: the same input, same file
    assert "  - {id: Dublin}   # no coordinates in the source file" in lines
    items = [line for line in lines if line.startswith("  - ")]
    assert len(items) == 29 + 45 + 406 and all(line.startswith("  - {") for line in items)
    assert import_topology(zoo("Janetbackbone"), Gravity(500.0), costs=costs,
                           target=0.02).text == text


def test_explicit_routes_are_shortest_paths(tmp_path):
    result = import_topology(zoo("Ntt"), Uniform(1.0), policy="alternate", routes="explicit",
                             max_routes=2)
    net = result.network
    g = nx.Graph(nx.read_graphml(zoo("Ntt")))
    g.remove_nodes_from(list(nx.isolates(g)))
    node = {s.id: s.node for s in read_topology(zoo("Ntt")).sites}
    hops = dict(nx.all_pairs_shortest_path_length(g))
    assert result.report.routing["max_hops"] == max(max(h.values()) for h in hops.values()) + 1
    for d in net.demands:
        assert not d.routes_generated and 1 <= len(d.routes) <= 2
        a, b = (node[x] for x in d.between)
        assert d.routes[0].hops == hops[a][b]   # networkx's shortest path length
        assert all(r.hops <= result.report.routing["max_hops"] for r in d.routes)
        assert [r.hops for r in d.routes] == sorted(r.hops for r in d.routes)


def test_sizing_an_imported_topology_meets_targets_by_erlang_b(erlang_b_ref):
    result = import_topology(zoo("Abilene"), Gravity(120.0, pairs=12),
                             costs=LinkCosts(module=1, module_cost=1.0, cost_per_km=0.001),
                             target=0.01)
    net = result.network
    plan = dimension(net, model="conservative", local_search=False)
    assert plan.feasible
    caps = [int(c) for c in plan.capacities]
    data = yaml.safe_load(result.text)
    cost = sum(link["cost_per_module"] * c + (link.get("fixed_cost", 0.0) if c else 0.0)
               for link, c in zip(data["links"], caps, strict=True))
    assert plan.cost == pytest.approx(cost)
    # un-thinned link loads and the product bound 1 - prod(1 - E(A_l, c_l)) (Erlang B by its
    # recursion): the conservative model's promise, checked here independently
    load = [0.0] * len(net.links)
    for d in net.demands:
        for j in d.routes[0].links:
            load[j] += d.traffic
    assert net.demands  # the bound is checked on every demand, so there must be some
    for d in net.demands:
        ok = 1.0
        for j in d.routes[0].links:
            ok *= 1 - erlang_b_ref(load[j], caps[j])
        assert 1 - ok <= d.target * (1 + 1e-9)


def test_sizing_sndlib_polska_with_its_demands(tmp_path, erlang_b_ref):
    topo_path, table, _, demands = sndlib_files(tmp_path, "polska")
    # SNDlib's values (unit not stated) taken as erlangs, scaled down to keep the test quick
    scaled = tmp_path / "scaled.csv"
    scaled.write_text("origin,destination,erlangs\n"
                      + "".join(f"{a},{b},{v / 10}\n" for a, b, v in demands))
    result = import_topology(topo_path, DemandTable(str(scaled)), costs=LinkCosts(module=1))
    plan = dimension(result.network, model="conservative", local_search=False)
    assert plan.feasible
    net = result.network
    caps = [int(c) for c in plan.capacities]
    load = [0.0] * len(net.links)
    for d in net.demands:
        for j in d.routes[0].links:
            load[j] += d.traffic
    assert net.demands  # the bound is checked on every demand, so there must be some
    for d in net.demands:
        ok = math.prod(1 - erlang_b_ref(load[j], caps[j]) for j in d.routes[0].links)
        assert 1 - ok <= d.target * (1 + 1e-9)


def test_import_option_errors():
    g = nx.read_graphml(zoo("Abilene"))
    label = {a["label"]: n for n, a in g.nodes(data=True)}
    hops = nx.shortest_path_length(g, label["New York"], label["Seattle"])   # networkx
    with pytest.raises(ValueError, match=r"max_hops 2: no route of at most 2 links joins "
                       rf"'New_York' and 'Seattle' \(the shortest has {hops}\); raise max_hops"):
        import_topology(zoo("Abilene"), Uniform(1.0), max_hops=2)
    with pytest.raises(ValueError, match=r"target: must be in \(0, 1\), got 1.5"):
        import_topology(zoo("Abilene"), Uniform(1.0), target=1.5)
    with pytest.raises(ValueError, match="policy: must be one of fixed, alternate"):
        import_topology(zoo("Abilene"), Uniform(1.0), policy="dynamic")
    with pytest.raises(ValueError, match="routes: must be one of generated, explicit"):
        import_topology(zoo("Abilene"), Uniform(1.0), routes="all")
    with pytest.raises(ValueError, match=r"max_routes: must be a whole number in \[1, 10000\]"):
        import_topology(zoo("Abilene"), Uniform(1.0), max_routes=0)
    with pytest.raises(ValueError, match=r"max_hops: must be a whole number in \[1, 64\]"):
        import_topology(zoo("Abilene"), Uniform(1.0), max_hops=65)
    with pytest.raises(ValueError, match=r"reservation: must be a whole number in \[0, "):
        import_topology(zoo("Abilene"), Uniform(1.0), reservation=-1)
    with pytest.raises(ValueError, match=r"capacity: must be a whole number in \[0, "):
        LinkCosts(capacity=2.5)
    with pytest.raises(ValueError, match="traffic: expected Gravity, Uniform or DemandTable"):
        import_topology(zoo("Abilene"), 100.0)
    with pytest.raises(ValueError, match=r"module: must be a whole number in \[1, "):
        LinkCosts(module=0)
    with pytest.raises(ValueError, match=r"cost_per_km: must be a number in \[0, 1e12\]"):
        LinkCosts(cost_per_km=-1.0)
    with pytest.raises(ValueError, match="capacity 50 is above max_capacity 40"):
        LinkCosts(capacity=50, max_capacity=40)


def test_cost_per_km_needs_some_length(tmp_path):
    g = nx.Graph()
    g.add_edge("a", "b")
    path = write_graphml(tmp_path, g)
    with pytest.raises(ValueError, match="cost_per_km: no link has a length"):
        import_topology(path, Uniform(1.0), costs=LinkCosts(cost_per_km=1.0))


def test_awkward_labels_are_quoted_and_read_back(tmp_path):
    g = nx.Graph()
    for n, label in [("1", "NO"), ("2", "007"), ("3", "Quay: west, [old] #2"), ("4", "true")]:
        g.add_node(n, label=label)
    g.add_edges_from([("1", "2"), ("2", "3"), ("3", "4")])
    result = import_topology(write_graphml(tmp_path, g), Uniform(1.0), name="Odd: names")
    assert [s.id for s in result.network.sites] == ["NO", "007", "Quay:_west,_[old]_#2", "true"]
    assert result.network.name == "Odd: names"
    assert scalar("NO") == "'NO'" and scalar(12) == "12"
    with pytest.raises(TypeError, match="scalar: unsupported value None"):
        scalar(None)


def test_flow_item_wraps_between_entries_and_places_a_long_comment_above():
    item = {"id": "X" * 40, "ends": ["A" * 30, "B" * 30], "module": 30}
    text = flow_item(item, comment="c" * 60)
    lines = text.splitlines()
    assert lines[0] == "  # " + "c" * 60
    assert all(len(line) <= WIDTH for line in lines)
    assert yaml.safe_load(text) == [item]


# --------------------------------------------------------------------------------------------
# writing
# --------------------------------------------------------------------------------------------
def test_write_text_refuses_to_replace_unless_forced(tmp_path):
    path = tmp_path / "net.yaml"
    path.write_text("mine\n")
    with pytest.raises(FileExistsError, match="already exists"):
        write_text("new\n", path)
    assert path.read_text() == "mine\n"
    write_text("new\n", path, force=True)
    assert path.read_text() == "new\n"
    assert list(tmp_path.iterdir()) == [path]   # no temporary file left behind


def test_write_text_mode_0644_whatever_the_umask(tmp_path):
    old = os.umask(0o077)
    try:
        write_text("x\n", tmp_path / "a.yaml")
    finally:
        os.umask(old)
    assert (tmp_path / "a.yaml").stat().st_mode & 0o777 == 0o644


def test_write_text_without_hard_links(tmp_path, monkeypatch):
    def no_links(src, dst):
        raise PermissionError(1, "Operation not permitted")

    monkeypatch.setattr(os, "link", no_links)
    write_text("x\n", tmp_path / "a.yaml")
    assert (tmp_path / "a.yaml").read_text() == "x\n"

    def raced(src, dst):   # someone else writes the file between the check and the link
        pathlib.Path(dst).write_text("theirs\n")
        raise PermissionError(1, "Operation not permitted")

    monkeypatch.setattr(os, "link", raced)
    with pytest.raises(FileExistsError, match="already exists"):
        write_text("x\n", tmp_path / "b.yaml")
    assert (tmp_path / "b.yaml").read_text() == "theirs\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.yaml", "b.yaml"]


def test_write_text_error_names_the_file(tmp_path):
    with pytest.raises(OSError, match="cannot write") as err:
        write_text("x\n", tmp_path / "no" / "dir" / "a.yaml")
    assert err.value.filename == str(tmp_path / "no" / "dir" / "a.yaml")

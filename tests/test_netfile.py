"""Network files: every kind of bad input, reading, writing back, and the demo networks.

Most checks here are of bookkeeping against the file format's own definition (README, issue 3).
Outside facts used: traffic = arrival rate x mean holding time (Little's law, J. D. C. Little,
"A proof for the queuing formula L = lambda W", Operations Research 9(3), 1961); the YAML
syntax rules are PyYAML's (pyyaml.org), whose parser reports the line of a syntax error.
"""

import os
import pathlib
import re

import pytest
import yaml

from netdim.errors import NetworkFileError
from netdim.model import incidence
from netdim.netfile import (
    MAX_PROBLEMS,
    dumps_network,
    loads_network,
    network_to_dict,
    read_network,
    write_network,
)

HERE = pathlib.Path(__file__).resolve().parent
BROKEN = HERE / "data" / "broken"
NETWORKS = HERE.parent / "networks"

# file -> (line, item, problem regex). Lines counted by hand in each file (line 1 is the
# comment saying what is broken).
BROKEN_CASES = {
    # wording differs between PyYAML's pure-Python parser and libyaml's
    "yaml_syntax": (8, "YAML", r"(did not find )?expected ',' or '\]'"),
    "unknown_key": (5, "links[1]", r"unknown key 'capcity' \(did you mean 'capacity'\?\)"),
    "unknown_top_key": (9, "file", r"unknown key 'routng' \(did you mean 'routing'\?\)"),
    "duplicate_key": (11, "YAML", r"duplicate key 'traffic' \(first on line 10\)"),
    "missing_ends": (5, "link 'A-B'", r"'ends' is missing"),
    "missing_sites": (2, "sites", r"missing \(a list of sites\)"),
    "missing_traffic": (8, "demand 'D1'", r"'traffic' is missing"),
    "unknown_site": (8, "demand 'D1'", r"site 'Q' is not defined \(valid: A, B, C\)"),
    "unknown_link": (8, "demand 'D1'",
                     r"route 1: link 'B-X' is not defined \(did you mean 'B-C'\?\)"),
    "duplicate_site": (3, "site 'B'", r"duplicate id \(first on line 3\)"),
    "duplicate_link": (7, "link 'A-B'", r"duplicate id \(first on line 5\)"),
    "duplicate_demand": (9, "demand 'A-B'", r"duplicate id \(first on line 8\); give each"),
    "negative_traffic": (8, "demand 'D1'", r"traffic must be >= 0, got -1.0"),
    "text_traffic": (8, "demand 'D1'", r"traffic must be a number, got 'lots'"),
    "traffic_and_rate": (8, "demand 'D1'", r"give traffic \(erlangs\) or rate"),
    "zero_holding": (8, "demand 'D1'", r"holding must be > 0, got 0"),
    "huge_holding": (8, "demand 'D1'", r"holding 180000 is too large .*hours"),
    "step_holding": (12, "demand 'D1'", r"route 1: holding must be > 0, got -0.5"),
    "target_outside": (8, "demand 'D1'", r"target must be in \(0, 1\), got 1.5"),
    "default_target_zero": (9, "defaults", r"target must be in \(0, 1\), got 0"),
    "negative_capacity": (5, "link 'A-B'", r"capacity must be >= 0, got -5"),
    "fractional_capacity": (5, "link 'A-B'", r"capacity must be a whole number, got 5.5"),
    "zero_module": (5, "link 'A-B'", r"module must be >= 1, got 0"),
    "negative_cost": (5, "link 'A-B'", r"cost_per_module must be >= 0, got -2"),
    "max_below_installed": (5, "link 'A-B'", r"max_capacity 6 is below installed 10"),
    "absurd_capacity": (5, "link 'A-B'", r"capacity 50000000 is too large"),
    "absurd_traffic": (8, "demand 'D1'", r"traffic 20000000.0 is too large"),
    "negative_reservation": (5, "link 'A-B'", r"reservation must be >= 0, got -1"),
    "bandwidth_too_big": (8, "demand 'D1'",
                          r"bandwidth 6 fits no route: .*link 'A-B' with at most 5 units"),
    "route_gap": (9, "demand 'D1'", r"route 1: link 'A-C' does not continue from site 'B'"),
    "route_wrong_end": (8, "demand 'D1'", r"route 1: ends at 'B', not at 'C'"),
    "route_loop": (9, "demand 'D1'", r"route 1: visits site 'A' twice"),
    "route_off_ends": (8, "demand 'D1'", r"route 1: ends at 'C', not at 'A'"),
    "self_demand": (8, "demand 'D1'", r"between names the same site 'A' twice"),
    "no_route": (8, "demand 'D1'", r"no possible route: no path of at most 2 links joins "
                                   r"'A' and 'E'"),
    "unknown_policy": (9, "routing", r"unknown policy 'alternative' \(did you mean "
                                     r"'alternate'\?\); valid policies: fixed, alternate"),
    "bool_id": (3, "sites[4]", r"id must be text, got the yes/no value True"),
    "not_a_mapping": (1, "file", r"must be a mapping"),
}


def test_every_broken_file_has_a_case():
    assert {p.stem for p in BROKEN.glob("*.yaml")} == set(BROKEN_CASES)


@pytest.mark.parametrize("name", sorted(BROKEN_CASES))
def test_broken_file(name):
    line, item, problem = BROKEN_CASES[name]
    path = BROKEN / f"{name}.yaml"
    pattern = re.escape(f"{path}:{line}: {item}: ") + problem
    with pytest.raises(NetworkFileError, match=pattern) as info:
        read_network(path)
    # one problem per file: nothing else is reported as a knock-on effect
    assert len(info.value.problems) == 1, info.value.problems


def test_missing_file_one_line(tmp_path):
    path = tmp_path / "nowhere.yaml"
    with pytest.raises(NetworkFileError, match=re.escape(f"{path}: cannot read: ")) as info:
        read_network(path)
    assert len(info.value.problems) == 1


BASE = """\
name: tiny
sites: [{id: A}, {id: B}, {id: C}]
links:
  - {id: A-B, ends: [A, B], capacity: 5}
  - {id: B-C, ends: [B, C], capacity: 5}
  - {id: A-C, ends: [A, C], capacity: 5}
"""


def test_every_problem_reported_in_file_order():
    text = BASE + """\
demands:
  - {id: D1, between: [A, Q], traffic: 1}
  - {id: D2, between: [A, B], traffic: -1, target: 2}
  - {id: D3, between: [A, B], traffic: 1, routes: [[B-C]]}
routing: {policy: sometimes}
"""
    with pytest.raises(NetworkFileError) as info:
        loads_network(text, source="many.yaml")
    lines = info.value.problems
    assert [int(p.split(":")[1]) for p in lines] == [8, 9, 9, 10, 11]
    assert "site 'Q' is not defined" in lines[0]
    assert "unknown policy 'sometimes'" in lines[4]


def test_problem_cap():
    demands = "".join(
        f"  - {{id: D{i}, between: [A, B], traffic: -1}}\n" for i in range(MAX_PROBLEMS + 7)
    )
    with pytest.raises(NetworkFileError, match="and 7 more problems not shown") as info:
        loads_network(BASE + "demands:\n" + demands, source="cap.yaml")
    assert len(info.value.problems) == MAX_PROBLEMS + 1


# -- reading ---------------------------------------------------------------------------------
def test_rate_holding_and_defaults():
    net = loads_network(BASE + """\
defaults: {target: 0.02, holding: 3.0}
demands:
  - {id: visit, between: [A, B], rate: 4, holding: 2.5}
  - {id: plain, between: [A, C], traffic: 6}
  - {id: fast, between: [B, C], rate: 12, target: 0.05}
""")
    visit, plain, fast = net.demands
    # Little's law: offered erlangs = arrivals per hour x mean holding (Little 1961)
    assert visit.traffic == pytest.approx(4 * 2.5)
    assert visit.holding == 2.5
    assert visit.rate == pytest.approx(4)
    assert (plain.traffic, plain.holding, plain.target) == (6.0, 3.0, 0.02)
    assert fast.traffic == pytest.approx(12 * 3.0)
    assert fast.target == 0.05
    assert net.default_target == 0.02 and net.default_holding == 3.0


def test_step_holding_overrides_and_incidence():
    net = loads_network(BASE + """\
demands:
  - id: park
    between: [A, C]
    rate: 10
    holding: 3.0
    routes:
      - [A-C]
      - [{link: A-B}, {link: B-C, holding: 0.25}]
""")
    d = net.demands[0]
    assert d.routes[0].holdings == (3.0,)
    assert d.routes[1].links == (0, 1)
    assert d.routes[1].holdings == (3.0, 0.25)
    assert not d.routes_generated
    inc = incidence(net)
    # load a route offers a link scales with the holding time there (Little's law)
    assert list(inc.step_factor) == [1.0, 1.0, 0.25 / 3.0]


def test_generated_routes_direct_first_then_tandem():
    text = """\
name: star
sites: [{id: A}, {id: B}, {id: T1}, {id: T2}]
links:
  - {id: A-T2, ends: [A, T2], length: 1}
  - {id: T2-B, ends: [T2, B], length: 1}
  - {id: A-T1, ends: [A, T1], length: 2}
  - {id: T1-B, ends: [T1, B], length: 2}
  - {id: A-B, ends: [A, B], length: 9}
demands:
  - {between: [A, B], traffic: 1}
routing: {policy: alternate, max_hops: 2, reservation: 1}
"""
    net = loads_network(text)
    d = net.demands[0]
    assert d.id == "A-B"
    assert d.routes_generated
    ids = [[net.links[j].id for j in r.links] for r in d.routes]
    assert ids == [["A-B"], ["A-T2", "T2-B"], ["A-T1", "T1-B"]]
    net2 = loads_network(text.replace("reservation: 1}", "reservation: 1, max_routes: 2}"))
    assert len(net2.demands[0].routes) == 2
    assert net2.routing.max_routes == 2
    assert net.routing.policy == "alternate" and net.routing.reservation == 1


def test_all_link_fields_and_extra():
    net = loads_network("""\
name: fields
description: kept as it is
x-owner: planning
sites: [{id: A, name: Alpha, x: 1, y: 2}, B, {id: NO}]
links:
  - {id: A-B, ends: [A, B], capacity: 40, installed: 20, module: 10, cost_per_module: 2.5,
     fixed_cost: 100, max_capacity: 200, length: 3.5, reservation: 2}
  - {id: B-NO, ends: [B, NO]}
demands:
  - {id: 7, between: [A, B], traffic: 1e3, value: 4, bandwidth: 2}
  - {between: [B, NO], traffic: '2.5'}
""")
    link = net.links[0]
    assert (link.capacity, link.installed, link.module, link.cost_per_module) == (40, 20, 10, 2.5)
    assert (link.fixed_cost, link.max_capacity, link.length, link.reservation) == (
        100.0, 200, 3.5, 2)
    assert net.links[1].capacity is None
    assert list(net.reservations()) == [2, 0]
    assert net.sites[0].name == "Alpha" and net.sites[2].id == "NO"
    d = net.demands[0]
    assert (d.id, d.traffic, d.value, d.bandwidth) == ("7", 1000.0, 4.0, 2)
    assert net.demands[1].traffic == 2.5
    assert net.extra == {"description": "kept as it is", "x-owner": "planning"}
    assert link.line == 6 and net.demands[0].line == 10


# -- writing ---------------------------------------------------------------------------------
ROUND = BASE + """\
x-note: a kept field
defaults: {target: 0.02, holding: 2.0}
routing: {policy: alternate, max_hops: 2, reservation: 1, max_routes: 3}
demands:
  - {id: D1, between: [A, B], traffic: 3.5, value: 2}
  - id: D2
    between: [A, C]
    rate: 3
    holding: 0.5
    bandwidth: 2
    target: 0.1
    routes:
      - [A-B, {link: B-C, holding: 0.1}]
      - [A-C]
"""


def test_round_trip_equal(tmp_path):
    net = loads_network(ROUND, source="round.yaml")
    path = tmp_path / "out.yaml"
    write_network(net, path)
    back = read_network(path)
    assert back == net
    assert back.extra == net.extra
    assert back.source == str(path)
    # generated routes are left for the reader to generate again; given ones are written
    data = yaml.safe_load(path.read_text())
    assert "routes" not in data["demands"][0]
    assert data["demands"][1]["routes"] == [["A-B", {"link": "B-C", "holding": 0.1}], ["A-C"]]


def test_round_trip_with_capacities(tmp_path):
    import numpy as np

    net = loads_network(ROUND)
    path = tmp_path / "plan.yaml"
    write_network(net, path, capacities=np.array([7, 0, 12]))
    back = read_network(path)
    assert list(back.capacities()) == [7, 0, 12]
    assert back == net.with_capacities([7, 0, 12])
    with pytest.raises(ValueError, match="capacities: expected 3 values"):
        network_to_dict(net, capacities=[1, 2])
    with pytest.raises(ValueError, match="capacities: must be whole numbers >= 0"):
        network_to_dict(net, capacities=[1, 2, -3])


def test_write_refuses_demand_without_routes():
    import dataclasses

    net = loads_network(ROUND)
    bare = dataclasses.replace(net.demands[0], routes=())
    net = dataclasses.replace(net, demands=(bare,) + net.demands[1:])
    with pytest.raises(ValueError, match="demand 'D1' has no routes"):
        dumps_network(net)


def test_write_to_missing_directory_fails_cleanly(tmp_path):
    net = loads_network(ROUND)
    path = tmp_path / "no" / "such" / "dir" / "out.yaml"
    with pytest.raises(OSError, match="cannot write") as info:
        write_network(net, path)
    assert info.value.filename == str(path)
    assert not (tmp_path / "no").exists()


def test_failed_write_leaves_existing_file_untouched(tmp_path, monkeypatch):
    net = loads_network(ROUND)
    path = tmp_path / "keep.yaml"
    path.write_text("old contents\n")

    def broken_dump(*args, **kwargs):
        raise RuntimeError("disk on fire")

    monkeypatch.setattr(yaml, "dump", broken_dump)
    with pytest.raises(RuntimeError, match="disk on fire"):
        write_network(net, path)
    assert path.read_text() == "old contents\n"
    assert os.listdir(tmp_path) == ["keep.yaml"]


def test_failed_replace_leaves_no_partial_file(tmp_path, monkeypatch):
    net = loads_network(ROUND)
    path = tmp_path / "keep.yaml"
    path.write_text("old contents\n")

    def broken_replace(src, dst):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(os, "replace", broken_replace)
    with pytest.raises(OSError, match="cannot write: Permission denied"):
        write_network(net, path)
    assert path.read_text() == "old contents\n"
    assert os.listdir(tmp_path) == ["keep.yaml"]  # the temporary file is gone


# -- demo networks ---------------------------------------------------------------------------
DEMOS = sorted(NETWORKS.glob("*.yaml"))


def test_demos_present():
    assert {"regional-telephone", "campus-parking"} <= {p.stem for p in DEMOS}


@pytest.mark.parametrize("path", DEMOS, ids=[p.stem for p in DEMOS])
def test_demo_loads_with_capacities(path, tmp_path):
    net = read_network(path)
    caps = net.capacities()  # every capacity given, so evaluate runs
    assert len(caps) == len(net.links)
    for link in net.links:
        assert (link.capacity - link.installed) % link.module == 0, link.id
    assert all(d.routes for d in net.demands)
    out = tmp_path / path.name
    write_network(net, out)
    assert read_network(out) == net


# -- further error paths, inline (each one problem on a known line of BASE + text) ---------
def demand(fields):
    return BASE + "demands:\n  - {id: D1, between: [A, B], " + fields + "}\n"


NODEMANDS = BASE + "demands: []\n"  # a valid file with no demands
MORE_CASES = [
    # (text, line, item, problem regex)
    (demand("traffic: 1, routes: [A-B]"), 8, "demand 'D1'",
     r"route 1: must be a list of link ids, got text 'A-B'"),
    (demand("traffic: 1, routes: []"), 8, "demand 'D1'", r"routes is empty \(omit it"),
    (demand("traffic: 1, routes: 3"), 8, "demand 'D1'", r"routes must be a list, got int 3"),
    (demand("traffic: 1, routes: [[A-B], [A-B]]"), 8, "demand 'D1'",
     r"route 2: repeats route 1"),
    (demand("traffic: 1, routes: [[{lnk: A-B}]]"), 8, "demand 'D1'",
     r"route 1: unknown key 'lnk' \(did you mean 'link'\?\)"),
    (demand("traffic: .nan"), 8, "demand 'D1'", r"traffic must be a number, got nan"),
    (demand("traffic: [1]"), 8, "demand 'D1'", r"traffic must be a number, got a list"),
    (demand("rate: 2.0e+12, holding: 1"), 8, "demand 'D1'", r"rate .* is too large"),
    (demand("rate: 2.0e+6, holding: 9"), 8, "demand 'D1'",
     r"rate x holding = 1.8e\+07 erlangs is too large"),
    (demand("traffic: 1, bandwidth: 0"), 8, "demand 'D1'", r"bandwidth must be >= 1, got 0"),
    (demand("traffic: 1, value: -3"), 8, "demand 'D1'", r"value must be >= 0, got -3"),
    (demand("traffic: 1, id: D2"), 8, "YAML", r"duplicate key 'id' \(first on line 8\)"),
    (BASE + "demands: 4\n", 7, "demands", r"must be a list, got int 4"),
    (BASE + "demands:\n  - 4\n", 8, "demands[1]", r"a demand must be a mapping"),
    (NODEMANDS.replace("capacity: 5}\n  - {id: B-C", "capacity: 5, installed: 8}\n  - {id: B-C"),
     4, "link 'A-B'", r"capacity 5 is below installed 8"),
    (NODEMANDS.replace("{id: B-C, ends: [B, C], capacity: 5}",
                  "{id: B-C, ends: [B, C], capacity: 50, max_capacity: 40}"),
     5, "link 'B-C'", r"capacity 50 is above max_capacity 40"),
    (NODEMANDS.replace("{id: B-C, ends: [B, C], capacity: 5}", "{id: B-C, ends: [B, B]}"),
     5, "link 'B-C'", r"ends names the same site 'B' twice"),
    (NODEMANDS.replace("{id: B-C, ends: [B, C], capacity: 5}", "{id: B-C, ends: [B]}"),
     5, "link 'B-C'", r"ends must be a list of two site ids, got a list"),
    (NODEMANDS.replace("capacity: 5}\n  - {id: A-C", "length: x}\n  - {id: A-C"),
     5, "link 'B-C'", r"length must be a number, got 'x'"),
    (NODEMANDS.replace("{id: B-C, ends: [B, C], capacity: 5}", "[B-C]"),
     5, "links[2]", r"a link must be a mapping"),
    (NODEMANDS.replace("{id: B-C, ends: [B, C], capacity: 5}", "{ends: [B, C]}"),
     5, "links[2]", r"'id' is missing"),
    (NODEMANDS.replace("{id: C}]", "{id: C, x: east}]"),
     2, "site 'C'", r"x must be a number, got 'east'"),
    (NODEMANDS.replace("{id: C}]", "{id: C, name: [1]}]"),
     2, "site 'C'", r"name must be text, got a list"),
    (NODEMANDS.replace("{id: C}]", "{id: C}, [D]]"),
     2, "sites[4]", r"a site must be a mapping"),
    (NODEMANDS.replace("name: tiny", "name: [tiny]"), 1, "name", r"name must be text, got a list"),
    (NODEMANDS.replace("name: tiny", "name: tiny\n? [a]\n: 1"), 2, "YAML",
     r"a key must be plain text"),
    (BASE + "demands: []\nrouting: {max_hops: 65}\n", 8, "routing",
     r"max_hops 65 is too large \(more than 64 links per route\)"),
    (BASE + "demands: []\nrouting: {max_routes: 0}\n", 8, "routing", r"max_routes must be >= 1"),
    (BASE + "demands: []\nrouting: 2\n", 8, "routing", r"must be a mapping, got int 2"),
    (BASE + "demands: []\ndefaults: {holding: -1}\n", 8, "defaults", r"holding must be > 0"),
    ("", 1, "file", r"is empty"),
    ("just text\n", 1, "file", r"must be a mapping .*got text 'just text'"),
    ("a: 1\n---\nb: 2\n", 2, "YAML", r".*single document"),
]


@pytest.mark.parametrize("text, line, item, problem", MORE_CASES)
def test_more_error_paths(text, line, item, problem):
    pattern = re.escape(f"inline.yaml:{line}: {item}: ") + f"({problem})"
    with pytest.raises(NetworkFileError, match=pattern) as info:
        loads_network(text, source="inline.yaml")
    assert len(info.value.problems) == 1, info.value.problems


def test_zero_capacity_link_is_not_a_bandwidth_limit():
    # a link at capacity 0 is out of service: it blocks calls but does not make the file wrong
    net = loads_network(BASE.replace("capacity: 5}\n  - {id: B-C", "capacity: 0}\n  - {id: B-C")
                        + "demands:\n  - {id: D1, between: [A, B], traffic: 1, bandwidth: 3,"
                          " routes: [[A-B]]}\n")
    assert net.links[0].capacity == 0
    # one route that fits is enough (A-C and B-C get room for 6 units)
    roomy = BASE.replace("ends: [B, C], capacity: 5", "ends: [B, C], capacity: 6").replace(
        "ends: [A, C], capacity: 5", "ends: [A, C], max_capacity: 60")
    net = loads_network(roomy + "demands:\n  - {id: D1, between: [A, B], traffic: 1, "
                                "bandwidth: 6, routes: [[A-B], [A-C, {link: B-C}]]}\n")
    assert net.demands[0].bandwidth == 6
    with pytest.raises(NetworkFileError, match="bandwidth 7 fits no route"):
        loads_network(roomy + "demands:\n  - {id: D1, between: [A, B], traffic: 1, "
                              "bandwidth: 7, routes: [[A-B], [A-C, {link: B-C}]]}\n")


# -- values that must be refused, each with its one-line message (issues 12 and 19) --------
LIMIT_CASES = [
    # (text, line, item, problem regex)
    (demand("rate: 20"), 8, "demand 'D1'",
     r"rate needs holding \(mean hours per call\) to give the traffic: add holding here or "
     r"defaults.holding, or give traffic in erlangs"),
    (demand("traffic: 1").replace("capacity: 5}", "capacity: 2e400}", 1), 4, "link 'A-B'",
     r"capacity must be a finite number, got '2e400'"),
    (demand("traffic: 1").replace("capacity: 5}", "capacity: -.inf}", 1), 4, "link 'A-B'",
     r"capacity must be a finite number, got -inf"),
    (demand("traffic: " + "9" * 300), 8, "demand 'D1'",
     r"traffic must be a number, got a number of 300 digits"),
    (demand("traffic: 1").replace("capacity: 5}", "capacity: " + "7" * 5000 + "}", 1), 4,
     "link 'A-B'", r"capacity must be a number, got a number of 5000 digits"),
    (demand("traffic: 1").replace("capacity: 5}", "capacity: 2026-02-30}", 1), 4,
     "link 'A-B'", r"capacity must be a number, got '2026-02-30'"),
    (demand("traffic: ._"), 8, "demand 'D1'", r"traffic must be a number, got '._'"),
    (demand("traffic: 1, bandwidth: 0x1F_FFFF_FFFF"), 8, "demand 'D1'",
     r"bandwidth 137438953471 is too large"),
    (demand("traffic: 1").replace("{id: C}", "{id: C, x: 1e300}"), 2, "site 'C'",
     r"x '1e300' is too large"),
    (demand("traffic: 1e-400, holding: 1"), 8, "demand 'D1'",
     r"traffic must be a finite number|traffic"),  # underflows to 0: accepted, see below
    (demand("traffic: " + "[" * 60 + "]" * 60), 8, "YAML", r"nested more than 40 levels deep"),
    (demand("traffic: !!binary aGk="), 8, "YAML",
     r"tag !!binary is not used in network files \(plain YAML only\)"),
    (demand("traffic: !!python/object:os.system x"), 8, "YAML",
     r"tag !!python/object:os.system is not used"),
    ("x-a: &a [1, 2, 3, 4, 5, 6, 7, 8, 9, 10]\n"
     + "".join(f"x-{c}: &{c} [{', '.join([f'*{p}'] * 10)}]\n"
               for p, c in zip("abcdefg", "bcdefgh", strict=True)) + NODEMANDS, 4,
     "YAML",
     r"aliases expand to more than 10 times the items written"),
    (demand("traffic: 1, <<: 3"), 8, "YAML", r"a merge key '<<' must name a mapping"),
    (demand("traffic: *nowhere"), 8, "YAML", r"found undefined alias"),
    ("sites: [A, B]\ndemands: [{between: [A, B], traffic: 1}]\n", 1, "links",
     r"missing \(a list of links\)"),
    ("sites: [A, B]\nlinks: {}\ndemands: [{between: [A, B], traffic: 1}]\n", 2, "links",
     r"must be a list, got mapping"),
    (demand("traffic: 1").replace("name: tiny", "name: " + "n" * 500), 1, "name",
     r"^$|.*"),  # a long name is fine (checked below)
]


@pytest.mark.parametrize("text, line, item, problem",
                         [c for c in LIMIT_CASES if c[3] not in (r"^$|.*",)
                          and "1e-400" not in c[0]])
def test_limits_one_line_each(text, line, item, problem):
    pattern = re.escape(f"inline.yaml:{line}: {item}: ") + f"({problem})"
    with pytest.raises(NetworkFileError, match=pattern) as info:
        loads_network(text, source="inline.yaml")
    assert len(info.value.problems) == 1, info.value.problems


def test_rate_with_default_holding_and_tiny_numbers():
    net = loads_network(demand("rate: 20").replace("demands:", "defaults: {holding: 0.05}\n"
                                                                "demands:"))
    assert net.demands[0].traffic == pytest.approx(1.0)  # Little's law: 20/h x 0.05 h
    # a decimal below the smallest float reads as 0 (IEEE 754 underflow), which is in range
    assert loads_network(demand("traffic: 1e-400")).demands[0].traffic == 0.0
    assert loads_network(demand("traffic: 1").replace("name: tiny", "name: " + "n" * 500)
                         ).name == "n" * 500


def test_long_values_are_cut_in_messages():
    with pytest.raises(NetworkFileError, match=r"traffic must be a number, got 'xxxxx"
                                               r"[x]*\.\.\.xxxxx' \(300 characters\)"):
        loads_network(demand("traffic: " + "x" * 300), source="inline.yaml")


def test_yaml_merge_keys_read_as_yaml_says():
    net = loads_network(BASE.replace("  - {id: A-C, ends: [A, C], capacity: 5}\n",
                                     "  - {<<: &common {capacity: 9, module: 3}, id: A-C, "
                                     "ends: [A, C], capacity: 6}\n  - {<<: *common, id: C-A,"
                                     " ends: [C, A]}\n")
                        + "demands: []\n")
    # keys written in the mapping win over merged ones (YAML merge key spec, yaml.org/type/merge)
    assert [(k.capacity, k.module) for k in net.links[2:]] == [(6, 3), (9, 3)]


# -- files: kinds, sizes and encodings -----------------------------------------------------
GOOD = demand("traffic: 1")


def test_fifo_refused_at_once(tmp_path):
    fifo = tmp_path / "pipe.yaml"
    os.mkfifo(fifo)
    with pytest.raises(NetworkFileError, match=re.escape(
            f"{fifo}: cannot read: is a named pipe (FIFO), not a regular file")):
        read_network(fifo)


def test_directory_and_device_refused(tmp_path):
    with pytest.raises(NetworkFileError, match="cannot read: is a directory, not a regular"):
        read_network(tmp_path)
    with pytest.raises(NetworkFileError, match="cannot read: is a device, not a regular"):
        read_network("/dev/zero")


def test_size_limit(tmp_path):
    path = tmp_path / "n.yaml"
    path.write_text(GOOD)
    size = path.stat().st_size
    with pytest.raises(NetworkFileError, match=re.escape(
            f"{path}: cannot read: the file has {size} bytes, more than the limit of "
            f"{size - 1} bytes (--max-file-size to raise it)")):
        read_network(path, max_size=size - 1)
    assert read_network(path, max_size=size).demands[0].traffic == 1.0
    assert read_network(path, max_size=0).demands[0].traffic == 1.0  # 0: no limit


def test_unreadable_file(tmp_path):
    path = tmp_path / "n.yaml"
    path.write_text(GOOD)
    path.chmod(0)
    try:
        if os.access(path, os.R_OK):  # root reads anything
            pytest.skip("running as a user who can read a file of mode 000")
        with pytest.raises(NetworkFileError, match="cannot read: Permission denied"):
            read_network(path)
    finally:
        path.chmod(0o644)


@pytest.mark.parametrize("encoding", ["utf-8-sig", "utf-16", "utf-32"])
def test_byte_order_marks(tmp_path, encoding):
    path = tmp_path / "n.yaml"
    path.write_bytes(GOOD.replace("tiny", "Café").encode(encoding))
    assert read_network(path).name == "Café"


@pytest.mark.parametrize("data, problem", [
    (GOOD.replace("tiny", "Caf\xe9").encode("latin-1"),
     r":1: file: is not UTF-8 text \(byte 0xe9; save the file as UTF-8\)"),
    (GOOD.encode() + b"\n# \x00\x01\x02", r":10: file: holds a NUL character"),
    (bytes(range(256)) * 4, r":2: file: is not UTF-8 text \(byte 0x80"),
])
def test_odd_bytes(tmp_path, data, problem):
    path = tmp_path / "n.yaml"
    path.write_bytes(data)
    with pytest.raises(NetworkFileError, match=re.escape(str(path)) + problem) as info:
        read_network(path)
    assert len(info.value.problems) == 1


def test_control_characters_are_a_yaml_error():
    with pytest.raises(NetworkFileError, match=r"inline.yaml:8: YAML: unacceptable character "
                                               r"#x0007: control characters are not allowed$"):
        loads_network(GOOD.replace("traffic: 1", "traffic: 1\x07"), source="inline.yaml")

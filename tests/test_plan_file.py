"""Plan files: the input file written back with only its capacities changed.

Checks are of bookkeeping against the contract in README ("--out"): reading the plan file
gives the network with the plan's capacities, and a line diff (Python's difflib, an
independent comparison) shows only capacity lines. The capacities used are invented (demo
data); they only need to differ from the file's.
"""

from __future__ import annotations

import difflib
import os
import pathlib
import re

import numpy as np
import pytest
import yaml

from netdim.cli import main
from netdim.model import Demand, Link, Network, Route, Site
from netdim.netfile import (
    dumps_plan,
    loads_network,
    read_network,
    read_network_text,
    write_plan,
)
from netdim.netfile._plan import ADDED

NETWORKS = pathlib.Path(__file__).resolve().parent.parent / "networks"
DEMOS = sorted(NETWORKS.glob("*.yaml"))
_CAPACITY = re.compile(r"capacity: *\d+")


def other_capacities(net):
    """A plan different from the file's on every link, within each link's bounds."""
    caps = []
    for i, link in enumerate(net.links):
        c = link.installed + link.module * (i % 3 + 1)
        if c == link.capacity:
            c += link.module
        if link.max_capacity is not None and c > link.max_capacity:
            c = link.installed
        caps.append(c)
    return np.array(caps)


def changed_lines(before, after):
    """The removed and added lines of a line diff (difflib)."""
    diff = difflib.unified_diff(before.splitlines(), after.splitlines(), lineterm="", n=0)
    removed, added = [], []
    for line in diff:
        if line.startswith(("---", "+++", "@@")):
            continue
        (removed if line.startswith("-") else added).append(line[1:])
    return removed, added


@pytest.mark.parametrize("path", DEMOS, ids=[p.stem for p in DEMOS])
def test_bundled_plan_round_trip_and_diff(path, tmp_path):
    net = read_network(path)
    caps = other_capacities(net)
    out = tmp_path / path.name
    write_plan(net, out, caps)
    back = read_network(out)
    assert back == net.with_capacities(caps)
    assert back.extra == net.extra
    removed, added = changed_lines(path.read_text(), out.read_text())
    changed = sum(int(c) != link.capacity for c, link in zip(caps, net.links, strict=True))
    assert len(removed) == len(added) == changed > 0
    for old, new in zip(removed, added, strict=True):
        # the lines are equal but for the capacity value
        assert _CAPACITY.sub("capacity: N", old) == _CAPACITY.sub("capacity: N", new)
        assert _CAPACITY.search(old) and _CAPACITY.search(new)


def test_campus_shuttle_routes_and_rates_kept(tmp_path):
    path = NETWORKS / "campus-parking.yaml"
    net = read_network(path)
    out = tmp_path / "plan.yaml"
    caps = other_capacities(net)
    write_plan(net, out, caps)
    text = out.read_text()
    assert text.count("[P-FARFIELD, {link: SHUTTLE, holding: 0.25}]") == 4
    assert "rate: 60          # arrivals per hour at the peak" in text
    assert "traffic" not in text
    assert text.startswith("# Campus parking (invented)")
    shuttle = read_network(out).demands[0].routes[2]
    assert shuttle.holdings == (2.0, 0.25)


ADD = """\
name: added
sites: [A, B, C]
links:
  - {id: A-B, ends: [A, B]}
  - id: B-C
    ends: [B, C]   # a comment of the user's
    cost_per_module: 2
  - id: A-C
    ends:
      - A
      - C
  - {id: B-A, ends: [B, A], capacity: 4}  # kept
demands:
  - {between: [A, C], traffic: 1}
"""


def test_capacities_added_where_missing_are_marked():
    net = loads_network(ADD, source="add.yaml")
    text = dumps_plan(ADD, net, [3, 4, 5, 4])
    lines = text.splitlines()
    assert lines[3] == f"  - {{id: A-B, ends: [A, B], capacity: 3}}  {ADDED}"
    assert lines[5:8] == ["    ends: [B, C]   # a comment of the user's",
                          f"    capacity: 4  {ADDED}", "    cost_per_module: 2"]
    assert lines[12] == f"    capacity: 5  {ADDED}"
    assert lines[13] == "  - {id: B-A, ends: [B, A], capacity: 4}  # kept"
    assert [link.capacity for link in loads_network(text).links] == [3, 4, 5, 4]
    removed, added = changed_lines(ADD, text)
    assert len(removed) == 1 and len(added) == 3  # one changed line, two new ones
    assert all("capacity" in line for line in added)


def test_crlf_and_aliases_and_quotes():
    text = ("name: x\r\nsites: [A, B]\r\nc: &c 5\r\n".replace("c: &c 5\r\n", "")
            + "x-size: &c 5\r\nlinks:\r\n  - {id: A-B, ends: [A, B], capacity: *c}\r\n"
            "  - {id: B-A, ends: [B, A], capacity: '7'}\r\n  - {id: A-B2, ends: [A, B]}\r\n"
            "demands: [{between: [A, B], traffic: 1}]\r\n")
    net = loads_network(text)
    out = dumps_plan(text, net, [6, 8, 9])
    assert "capacity: 6}" in out and "capacity: 8}" in out
    assert f"capacity: 9}}  {ADDED}\r\n" in out
    back = loads_network(out)
    assert [link.capacity for link in back.links] == [6, 8, 9]
    assert back.extra == {"x-size": 5}  # the anchor's own value is not touched


def test_changed_file_is_refused(tmp_path):
    path = tmp_path / "n.yaml"
    path.write_text(ADD)
    net = read_network(path)
    path.write_text(ADD.replace("traffic: 1", "traffic: 2"))
    with pytest.raises(ValueError, match="does not read back to the network"):
        write_plan(net, tmp_path / "plan.yaml", [1, 2, 3, 4])
    assert not (tmp_path / "plan.yaml").exists()


def test_refuses_input_without_force(tmp_path):
    path = tmp_path / "n.yaml"
    path.write_text(ADD)
    net = read_network(path)
    with pytest.raises(ValueError, match="is the input file; .*--force"):
        write_plan(net, path, [1, 2, 3, 4])
    assert path.read_text() == ADD
    write_plan(net, path, [1, 2, 3, 4], force=True)
    assert [link.capacity for link in read_network(path).links] == [1, 2, 3, 4]


def test_network_built_in_python_is_written_fresh(tmp_path):
    net = Network("py", (Site("A"), Site("B")), (Link("A-B", ("A", "B")),),
                  (Demand("A-B", ("A", "B"), 2.0, routes=(Route((0,), (1.0,)),)),))
    out = tmp_path / "py.yaml"
    write_plan(net, out, [7])
    assert read_network(out) == net.with_capacities([7])


def test_plan_file_mode_follows_umask(tmp_path):
    net = loads_network(ADD, source=str(tmp_path / "absent.yaml"))
    old = os.umask(0o022)
    try:
        write_plan(net, tmp_path / "a.yaml", [1, 2, 3, 4], text=ADD)
        os.umask(0o077)
        write_plan(net, tmp_path / "b.yaml", [1, 2, 3, 4], text=ADD)
    finally:
        os.umask(old)
    assert (tmp_path / "a.yaml").stat().st_mode & 0o777 == 0o644
    assert (tmp_path / "b.yaml").stat().st_mode & 0o777 == 0o600


def test_failed_write_leaves_the_old_plan(tmp_path, monkeypatch):
    path = tmp_path / "n.yaml"
    path.write_text(ADD)
    net = read_network(path)
    out = tmp_path / "plan.yaml"
    out.write_text("old plan\n")

    def broken_replace(src, dst):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(os, "replace", broken_replace)
    with pytest.raises(OSError, match="cannot write: Permission denied"):
        write_plan(net, out, [1, 2, 3, 4])
    assert out.read_text() == "old plan\n"
    assert sorted(os.listdir(tmp_path)) == ["n.yaml", "plan.yaml"]


# -- the command line ----------------------------------------------------------------------
@pytest.fixture
def line_file(tmp_path, line_yaml):
    p = tmp_path / "line.yaml"
    p.write_text("# the line network (demo data)\n" + line_yaml())
    return p


def test_size_out_keeps_the_file(line_file, tmp_path, capsys):
    plan = tmp_path / "plan.yaml"
    assert main(["size", str(line_file), "--quiet", "--json", "--out", str(plan)]) == 0
    sized = [link["capacity"] for link in yaml.safe_load(capsys.readouterr().out)["links"]]
    before, after = line_file.read_text(), plan.read_text()
    assert after.startswith("# the line network (demo data)\n")
    removed, added = changed_lines(before, after)
    assert all(ADDED in line for line in added) and len(removed) == len(added) == 2
    back = read_network(plan)
    assert back == read_network(line_file).with_capacities(sized)


def test_size_out_refuses_the_input_before_sizing(line_file, capsys):
    before = line_file.read_text()
    assert main(["size", str(line_file), "--quiet", "--out", str(line_file)]) == 2
    err = capsys.readouterr()
    assert err.err.strip() == (f"netdim: error: {line_file}: is the input file; the plan "
                               "would replace it (write the plan to another file, or add "
                               "--force to replace it)")
    assert err.out == ""  # refused before any sizing
    assert line_file.read_text() == before
    assert main(["size", str(line_file), "--quiet", "--out", str(line_file), "--force"]) == 0
    capsys.readouterr()
    assert all(link.capacity is not None for link in read_network(line_file).links)
    assert read_network_text(line_file).startswith("# the line network")

"""``netdim check``: summary, JSON form and exit status.

The expected counts follow from the files themselves (bookkeeping, no outside source): the
small network below is counted by hand; the demos are counted from the files' text with
PyYAML (an independent reader of the same file).
"""

import json
import pathlib

import pytest
import yaml

from netdim.cli import main

HERE = pathlib.Path(__file__).resolve().parent
NETWORKS = HERE.parent / "networks"

SMALL = """\
name: small
sites: [{id: A}, {id: B}, {id: C}]
links:
  - {id: A-B, ends: [A, B], capacity: 5}
  - {id: B-C, ends: [B, C], capacity: 6}
  - {id: A-C, ends: [A, C]}
demands:
  - {between: [A, B], traffic: 1.5}
  - {between: [A, C], traffic: 2.0, routes: [[A-C], [A-B, {link: B-C, holding: 0.5}]]}
routing: {policy: alternate, reservation: 1}
"""


@pytest.fixture
def small(tmp_path):
    path = tmp_path / "small.yaml"
    path.write_text(SMALL)
    return path


def test_check_text(small, capsys):
    assert main(["check", str(small)]) == 0
    out = capsys.readouterr().out
    assert f"{small}: valid network file 'small'" in out
    assert "sites    3" in out
    assert "links    3 (1 without capacity: left to sizing)" in out
    assert "demands  2 (per-link holding times)" in out
    # counted by hand: A-B gets the direct link, then A-C + B-C; A-C gives two routes
    assert "routes   4: 2 given, 2 generated for 1 demands; longest 2 links" in out
    assert "offered  3.5 erlangs in total" in out
    assert "routing  alternate, reservation 1, max_hops 2" in out


def test_check_json(small, capsys):
    assert main(["check", "--json", str(small)]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["valid"] is True
    assert (data["sites"], data["links"], data["demands"]) == (3, 3, 2)
    assert (data["routes"], data["routes_given"], data["routes_generated"]) == (4, 2, 2)
    assert data["offered_traffic"] == pytest.approx(3.5)
    assert data["links_without_capacity"] == ["A-C"]
    assert data["policy"] == "alternate"


def test_check_invalid_exit_2(tmp_path, capsys):
    path = tmp_path / "bad.yaml"
    path.write_text(SMALL.replace("traffic: 1.5", "traffic: -1.5").replace(
        "capacity: 6", "capacity: six"))
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err.splitlines()
    assert err == [
        f"{path}:5: link 'B-C': capacity must be a number, got 'six'",
        f"{path}:8: demand 'A-B': traffic must be >= 0, got -1.5",
    ]


def test_check_missing_file(tmp_path, capsys):
    path = tmp_path / "absent.yaml"
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"{path}: cannot read: ")
    assert len(err.splitlines()) == 1


@pytest.mark.parametrize("name", ["regional-telephone", "campus-parking"])
def test_check_demos(name, capsys):
    path = NETWORKS / f"{name}.yaml"
    assert main(["check", "--json", str(path)]) == 0
    data = json.loads(capsys.readouterr().out)
    raw = yaml.safe_load(path.read_text())  # independent reading of the same file
    assert data["sites"] == len(raw["sites"])
    assert data["links"] == len(raw["links"])
    assert data["demands"] == len(raw["demands"])
    given = sum(len(d["routes"]) for d in raw["demands"] if "routes" in d)
    assert data["routes_given"] == given
    offered = sum(d["traffic"] if "traffic" in d else d["rate"] * d["holding"]
                  for d in raw["demands"])
    assert data["offered_traffic"] == pytest.approx(offered)
    assert data["links_without_capacity"] == []

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
    assert ("routes   4: 2 given (longest 2 links), 2 generated for 1 demand (longest 2 links)"
            in out)
    assert "offered  3.5 erlangs in total" in out
    assert "routing  alternate, reservation 1; routes generated with at most 2 links" in out


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


def test_check_routes_listed_in_order(small, capsys):
    assert main(["check", "--routes", str(small)]) == 0
    out = capsys.readouterr().out.splitlines()
    at = out.index("routes, in the order they are tried:")
    # counted by hand: A-B direct first, then A-C + C-B; A-C's two routes as given
    assert out[at + 1:] == [
        "  A-B (A - B, generated)",
        "    1. A-B",
        "    2. A-C > B-C",
        "  A-C (A - C, given)",
        "    1. A-C",
        "    2. A-B > B-C (B-C held 0.5 h)",
    ]
    assert main(["check", "--routes", "--json", str(small)]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["demand_routes"] == [
        {"demand": "A-B", "between": ["A", "B"], "generated": True,
         "routes": [{"links": ["A-B"], "holdings": [1.0]},
                    {"links": ["A-C", "B-C"], "holdings": [1.0, 1.0]}]},
        {"demand": "A-C", "between": ["A", "C"], "generated": False,
         "routes": [{"links": ["A-C"], "holdings": [1.0]},
                    {"links": ["A-B", "B-C"], "holdings": [1.0, 0.5]}]},
    ]
    assert main(["check", "--json", str(small)]) == 0
    assert "demand_routes" not in json.loads(capsys.readouterr().out)


def test_check_long_given_routes_not_called_max_hops(tmp_path, capsys):
    # a chain of 10 sites with one demand routed end to end over 9 links, given in the file
    sites = [f"S{i}" for i in range(10)]
    links = [f"  - {{id: L{i}, ends: [S{i}, S{i + 1}], capacity: 5}}" for i in range(9)]
    route = ", ".join(f"L{i}" for i in range(9))
    path = tmp_path / "chain.yaml"
    path.write_text(f"sites: [{', '.join(sites)}]\nlinks:\n" + "\n".join(links)
                    + f"\ndemands:\n  - {{between: [S0, S9], traffic: 1, routes: [[{route}]]}}\n")
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "routes   1: 1 given (longest 9 links)" in out
    assert "max_hops" not in out and "generated" not in out
    assert "demands  1\n" in out and "sites    10\n" in out
    assert main(["check", "--json", str(path)]) == 0
    data = json.loads(capsys.readouterr().out)
    assert (data["longest_route_given"], data["longest_route_generated"]) == (9, 0)


def test_check_max_file_size(small, capsys):
    assert main(["check", "--max-file-size", "100", str(small)]) == 2
    err = capsys.readouterr().err
    assert err == (f"{small}: cannot read: the file has {small.stat().st_size} bytes, more "
                   "than the limit of 100 bytes (--max-file-size to raise it)\n")
    assert main(["check", "--max-file-size", "1M", str(small)]) == 0
    capsys.readouterr()
    with pytest.raises(SystemExit) as info:  # argparse's own exit
        main(["check", "--max-file-size", "lots", str(small)])
    assert info.value.code == 2
    assert "expected a size such as 32M" in capsys.readouterr().err


@pytest.mark.parametrize("command", [["evaluate"], ["size", "--quiet"]])
@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_evaluate_and_size_take_the_file_size_limit_too(small, capsys, command):
    """`--max-file-size` applies to every command that reads a network file (issue 19),
    with the same one-line refusal as `check`'s."""
    assert main([*command, "--max-file-size", "100", str(small)]) == 2
    err = capsys.readouterr().err
    assert err == (f"{small}: cannot read: the file has {small.stat().st_size} bytes, more "
                   "than the limit of 100 bytes (--max-file-size to raise it)\n")
    assert main([*command, "--max-file-size", "1M", str(NETWORKS / "three-villages.yaml"),
                 "--json"]) == 0
    capsys.readouterr()

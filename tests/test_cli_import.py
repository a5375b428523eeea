"""`netdim import`: end to end on the shipped Topology Zoo files, the written file, the JSON
report, refusals and error messages.

Check values: site and link counts from networkx's own reading of each file (self-loops,
isolated nodes and parallel edges counted by networkx); SNDlib demand values read here from
the XML with ElementTree (tests/data/SOURCES.md). Topologies: the Internet Topology Zoo
(Knight et al., IEEE JSAC 29(9), 2011; CC BY 4.0; networks/SOURCES.md).
"""

from __future__ import annotations

import csv
import json
import pathlib
import shlex
import xml.etree.ElementTree as ET

import networkx as nx
import pytest
import yaml

from netdim.cli import import_cmd
from netdim.netfile import read_network

HERE = pathlib.Path(__file__).resolve().parent
NETWORKS = HERE.parent / "networks"
DATA = HERE / "data"
SND = "{http://sndlib.zib.de/network}"


@pytest.fixture
def main():
    """netdim's main()."""
    from netdim import cli

    return cli.main


def zoo(name):
    return str(NETWORKS / f"topozoo-{name}.graphml")


def nx_counts(name):
    """(sites, links) as networkx reads the file: nodes with an edge, distinct pairs."""
    g = nx.Graph(nx.read_graphml(zoo(name)))
    g.remove_edges_from(list(nx.selfloop_edges(g)))
    g.remove_nodes_from(list(nx.isolates(g)))
    assert nx.is_connected(g)
    return g.number_of_nodes(), g.number_of_edges()


GRAVITY = ["--traffic", "gravity", "--total", "300", "--module", "30", "--module-cost", "10",
           "--cost-per-km", "0.02"]


@pytest.mark.parametrize("name, extra, said", [
    ("Abilene", [], []),
    ("Janetbackbone", [], ["1 site(s) without usable coordinates", "Dublin",
                           "2 link(s) without a length: costed as if"]),
    # explicit routes: generating every route up to 6 links on this mesh takes seconds
    ("Ntt", ["--routes", "explicit"], ["merged 153 parallel edge(s)",
                                       "dropped 15 node(s) without edges"]),
])
def test_import_shipped_topology_end_to_end(main, tmp_path, capsys, name, extra, said):
    out = tmp_path / f"{name}.yaml"
    assert main(["import", zoo(name), "-o", str(out), *GRAVITY, *extra]) == 0
    captured = capsys.readouterr()
    sites, links = nx_counts(name)
    pairs = sites * (sites - 1) // 2
    assert captured.out.startswith(f"wrote {out}: {sites} sites, {links} links, {pairs} "
                                   "demands, 300 erlangs offered")
    for text in said:
        assert text in captured.err
    assert all(line.startswith("netdim import: ") for line in captured.err.splitlines())
    assert out.stat().st_mode & 0o777 == 0o644
    net = read_network(out)
    assert (len(net.sites), len(net.links), len(net.demands)) == (sites, links, pairs)
    assert main(["check", "--json", str(out)]) == 0
    summary = json.loads(capsys.readouterr().out)
    assert (summary["sites"], summary["links"], summary["demands"]) == (sites, links, pairs)
    assert summary["offered_traffic"] == pytest.approx(300, rel=1e-5)


def test_json_report(main, tmp_path, capsys):
    out = tmp_path / "ntt.yaml"
    assert main(["import", zoo("Ntt"), "-o", str(out), "--json", "--routes", "explicit",
                 "--traffic", "uniform", "--per-pair", "0.5"]) == 0
    d = json.loads(capsys.readouterr().out)
    g = nx.read_graphml(zoo("Ntt"))
    assert d["output"] == str(out)
    assert (d["nodes"], d["edges"]) == (g.number_of_nodes(), g.number_of_edges())
    assert (d["sites"], d["links"]) == nx_counts("Ntt")
    assert d["demands"] == 32 * 31 // 2 and d["offered_traffic"] == pytest.approx(0.5 * 496)
    assert d["format"] == "graphml" and len(d["sha256"]) == 64 and d["parts"] == 1
    assert d["traffic_model"] == {"model": "uniform", "per_pair": 0.5}
    assert d["routing"] == {"policy": "fixed", "max_hops": 6, "max_routes": 1,
                            "reservation": 0, "routes": "explicit"}
    found = {f["what"]: f for f in d["findings"]}
    assert found["isolated_nodes"]["action"] == "dropped"
    assert found["isolated_nodes"]["count"] == len(list(nx.isolates(g)))
    assert found["parallel_edges"]["action"] == "merged"
    assert found["routing"]["action"] == "chosen"
    for f in d["findings"]:
        assert set(f) == {"action", "what", "count", "items", "message"}


def test_refuses_to_replace_an_existing_file(main, tmp_path, capsys):
    out = tmp_path / "mine.yaml"
    out.write_text("my own network\n")
    argv = ["import", zoo("Abilene"), "-o", str(out), "--traffic", "uniform", "--per-pair", "1"]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert err == f"netdim: error: {out}: already exists (add --force to replace it)\n"
    assert out.read_text() == "my own network\n"
    assert main([*argv, "--force", "--quiet"]) == 0
    assert capsys.readouterr().err == ""
    assert read_network(out).name == "Abilene"


def test_refuses_to_write_over_the_topology(main, tmp_path, capsys):
    topo = tmp_path / "t.graphml"
    topo.write_bytes(pathlib.Path(zoo("Abilene")).read_bytes())
    assert main(["import", str(topo), "-o", str(topo), "--force", "--traffic", "uniform",
                 "--per-pair", "1"]) == 2
    assert "is the topology file itself" in capsys.readouterr().err
    assert topo.read_bytes() == pathlib.Path(zoo("Abilene")).read_bytes()


def test_standard_output_and_the_command_that_makes_it_again(main, tmp_path, capsys,
                                                              monkeypatch):
    argv = ["import", zoo("Janetbackbone"), "-o", "-", "--traffic", "gravity", "--total",
            "250", "--decay-km", "150", "--pairs", "40", "--weight", "degree", "--module", "30",
            "--policy", "alternate", "--reservation", "2", "--target", "0.005", "--quiet"]
    assert main(argv) == 0
    text = capsys.readouterr().out
    data = yaml.safe_load(text)
    assert len(data["demands"]) == 40 and data["defaults"] == {"target": 0.005}
    assert data["routing"]["policy"] == "alternate" and data["routing"]["reservation"] == 2
    # the header's command, run again beside a copy of the topology, writes the same text
    header = " ".join(line[1:].strip() for line in text.splitlines() if line.startswith("#"))
    words = shlex.split(header.split("Made with: ", 1)[1])
    assert words[:3] == ["netdim", "import", "topozoo-Janetbackbone.graphml"]
    (tmp_path / words[2]).write_bytes(pathlib.Path(zoo("Janetbackbone")).read_bytes())
    monkeypatch.chdir(tmp_path)
    assert main([*words[1:], "-o", "again.yaml", "--quiet"]) == 0
    assert (tmp_path / "again.yaml").read_text() == text


def write_sndlib(tmp_path, name):
    root = ET.parse(DATA / f"sndlib-{name}.xml").getroot()
    g = nx.Graph()
    for node in root.iter(f"{SND}node"):
        g.add_node(node.get("id"), Longitude=float(node.find(f"{SND}coordinates/{SND}x").text),
                   Latitude=float(node.find(f"{SND}coordinates/{SND}y").text))
    for link in root.iter(f"{SND}link"):
        g.add_edge(link.find(f"{SND}source").text, link.find(f"{SND}target").text)
    topo = tmp_path / f"{name}.graphml"
    nx.write_graphml(g, topo)
    rows = [(d.find(f"{SND}source").text, d.find(f"{SND}target").text,
             float(d.find(f"{SND}demandValue").text)) for d in root.iter(f"{SND}demand")]
    table = tmp_path / f"{name}.csv"
    with table.open("w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["origin", "destination", "erlangs"])
        w.writerows(rows)
    return topo, table, rows


def test_sndlib_demands_through_the_command_line(main, tmp_path, capsys):
    topo, table, rows = write_sndlib(tmp_path, "polska")
    out = tmp_path / "polska.yaml"
    assert main(["import", str(topo), "-o", str(out), "--demands", str(table)]) == 0
    assert "66 demands, 9943 erlangs offered" in capsys.readouterr().out  # XML sum: 9943
    net = read_network(out)
    assert {frozenset(d.between): d.traffic for d in net.demands} == {
        frozenset((a, b)): v for a, b, v in rows}


def test_bad_demand_rows_exit_2_and_write_nothing(main, tmp_path, capsys):
    topo, table, _ = write_sndlib(tmp_path, "polska")
    table.write_text("origin,destination,erlangs\nGdansk,Warsaw,12\nGdansk,Krakov,3\n"
                     "Lodz,Poznan,lots\n")
    out = tmp_path / "polska.yaml"
    assert main(["import", str(topo), "-o", str(out), "--demands", str(table)]) == 2
    err = capsys.readouterr().err.splitlines()
    assert err == [f"{table}:3: destination: site 'Krakov' is not in the topology (did you "
                   "mean 'Krakow'?)",
                   f"{table}:4: erlangs must be a number >= 0, got 'lots'"]
    assert not out.exists()


@pytest.mark.parametrize("args, message", [
    ([], "no traffic: give --traffic gravity --total E, --traffic uniform --per-pair E, or "
         "--demands FILE.csv"),
    (["--traffic", "gravity"], "--traffic gravity needs --total E"),
    (["--traffic", "uniform"], "--traffic uniform needs --per-pair E"),
    (["--traffic", "uniform", "--per-pair", "1", "--pairs", "3"],
     "--pairs applies to --traffic gravity only"),
    (["--traffic", "gravity", "--total", "9", "--per-pair", "1"],
     "--per-pair applies to --traffic uniform only"),
    (["--traffic", "gravity", "--demands", "d.csv"], "give --traffic or --demands, not both"),
    (["--demands", "d.csv", "--total", "4"], "--total applies to --traffic, not to --demands"),
    (["--traffic", "uniform", "--per-pair", "1", "--max-hops", "2"],
     "max_hops 2: no route of at most 2 links joins"),
])
def test_option_errors_exit_2_with_one_line(main, tmp_path, capsys, args, message):
    out = tmp_path / "x.yaml"
    assert main(["import", zoo("Abilene"), "-o", str(out), *args]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"netdim: error: {message}") and err.count("\n") == 1
    assert not out.exists()


@pytest.mark.parametrize("args, message", [
    (["--total", "-1"], "argument --total: must be > 0, got '-1'"),
    (["--pairs", "2.5"], "argument --pairs: expected a whole number, got '2.5'"),
    (["--target", "1"], "argument --target: must be in (0, 1), got '1'"),
    (["--module-cost", "-1"], "argument --module-cost: must be >= 0, got '-1'"),
    (["--total", "x"], "argument --total: expected a number, got 'x'"),
    (["--coordinates", "lon"], "argument --coordinates: expected LON_ATTR,LAT_ATTR, got 'lon'"),
    (["--policy", "dynamic"], "argument --policy: invalid choice: 'dynamic'"),
])
def test_bad_option_values(main, tmp_path, capsys, args, message):
    with pytest.raises(SystemExit) as exc:
        main(["import", zoo("Abilene"), "-o", str(tmp_path / "x.yaml"), "--traffic",
              "gravity", *args])
    assert exc.value.code == 2
    assert message in capsys.readouterr().err


def test_unreadable_topologies(main, tmp_path, capsys):
    args = ["-o", str(tmp_path / "x.yaml"), "--traffic", "uniform", "--per-pair", "1"]
    assert main(["import", str(tmp_path / "none.graphml"), *args]) == 2
    assert capsys.readouterr().err == f"{tmp_path / 'none.graphml'}: cannot read: No such file " \
                                      "or directory\n"
    bad = tmp_path / "bad.graphml"
    bad.write_text("<graphml><graph>")
    assert main(["import", str(bad), *args]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"{bad}: cannot read as GraphML: ") and err.count("\n") == 1
    assert main(["import", str(bad), "--format", "gml", *args]) == 2
    assert capsys.readouterr().err.startswith(f"{bad}: cannot read as GML: ")
    assert main(["import", str(bad), "-o", "-", "--json", "--traffic", "uniform",
                 "--per-pair", "1"]) == 2
    assert "--json prints to standard output" in capsys.readouterr().err


def test_output_taken_while_importing(main, tmp_path, capsys, monkeypatch):
    def taken(text, path, force=False):
        raise FileExistsError(17, "already exists (not replaced)", str(path))

    monkeypatch.setattr(import_cmd, "write_text", taken)
    out = tmp_path / "x.yaml"
    assert main(["import", zoo("Abilene"), "-o", str(out), "--traffic", "uniform",
                 "--per-pair", "1", "--quiet"]) == 2
    assert capsys.readouterr().err == (f"netdim: error: {out}: already exists (add --force to "
                                       "replace it)\n")


def test_imported_network_sizes_from_the_command_line(main, tmp_path, capsys):
    out = tmp_path / "abilene.yaml"
    assert main(["import", zoo("Abilene"), "-o", str(out), "--traffic", "gravity", "--total",
                 "100", "--pairs", "10", "--cost-per-km", "0.001", "--quiet"]) == 0
    capsys.readouterr()
    assert main(["size", str(out), "--json", "--quiet"]) == 0
    plan = json.loads(capsys.readouterr().out)
    assert len(plan["links"]) == nx_counts("Abilene")[1] and len(plan["demands"]) == 10

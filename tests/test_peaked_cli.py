"""The peaked fixed point on the command line: `evaluate` (its default under alternate
routing, `--method`, the `--check` column) and `size --model` (issue 18).

Sources: the exact Markov chain of the bundled three-village network (method 'exact', itself
checked against brute-force chains in tests/test_exact.py) for the accuracy of the default;
the library's own functions for what the command line prints (a thin layer).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from netdim.cli import main
from netdim.evaluate import evaluate
from netdim.evaluate.peaked_fixed_point import peaked_fixed_point
from netdim.netfile import read_network

VILLAGES = Path(__file__).resolve().parent.parent / "networks" / "three-villages.yaml"

WIDE = """\
name: Wide calls
sites: [{id: A}, {id: B}, {id: C}]
links:
  - {id: AB, ends: [A, B], capacity: 10}
  - {id: BC, ends: [B, C], capacity: 10}
  - {id: AC, ends: [A, C], capacity: 10}
demands:
  - {between: [A, C], traffic: 2, bandwidth: 2, routes: [[AC], [AB, BC]]}
routing: {policy: alternate, reservation: 1}
"""


def test_evaluate_defaults_to_the_peaked_fixed_point_under_alternate_routing(capsys):
    # source: the exact chain of three-villages.yaml; measured peaked / exact 0.82-0.90,
    # plain / exact 0.52-0.55 (docs/measurements/peaked.md)
    assert main(["evaluate", str(VILLAGES), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["method"] == "peaked-fixed-point"
    net = read_network(VILLAGES)
    exact = evaluate(net, method="exact").blocking
    got = np.array([d["blocking"] for d in out["demands"]])
    ids = [d["id"] for d in out["demands"]]
    ratio = got / exact[[net.demand_ids.index(i) for i in ids]]
    assert np.all((ratio > 1 / 1.3) & (ratio < 1.3))
    assert main(["evaluate", str(VILLAGES), "--json", "--method", "fixed-point"]) == 0
    plain = json.loads(capsys.readouterr().out)
    assert plain["method"] == "fixed-point"
    assert main(["evaluate", str(VILLAGES), "--method", "peaked-fixed-point", "--tol",
                 "1e-12"]) == 0
    text = capsys.readouterr().out
    assert "method: peaked-fixed-point" in text and "status: converged" in text


def test_check_sets_the_peaked_fixed_point_beside_the_others(capsys):
    # source: the library's peaked_fixed_point at the file's capacities
    assert main(["evaluate", str(VILLAGES), "--check", "--json", "--seed", "3", "--calls",
                 "100000", "--quiet"]) in (0, 1)
    out = json.loads(capsys.readouterr().out)
    ev = peaked_fixed_point(read_network(VILLAGES))
    for rec in out["demands"]:
        i = ev.demand_ids.index(rec["id"])
        assert rec["peaked_fixed_point"] == pytest.approx(ev.blocking[i], rel=1e-12)
        lo, hi = rec["interval"]
        assert rec["peaked_outside"] == (not lo <= rec["peaked_fixed_point"] <= hi)
        assert "fixed_point" in rec and "exact" in rec  # the old keys stay
    assert "peaked-fixed-point" in out["methods"]
    assert main(["evaluate", str(VILLAGES), "--check", "--seed", "3", "--calls", "100000",
                 "--quiet"]) in (0, 1)
    text = capsys.readouterr().out
    assert "peaked" in text.splitlines()[0]
    assert "The peaked fixed point (overflow's bursts followed) lies outside" in text


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_size_picks_the_model_by_routing(capsys):
    # source: the plan's own evaluation; the model named in the JSON
    assert main(["size", str(VILLAGES), "--json", "--quiet"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["model"] == "peaked-fixed-point"
    assert out["lower_bound"] <= out["cost"]
    caps = [link["capacity"] for link in out["links"]]
    assert peaked_fixed_point(read_network(VILLAGES), caps).all_met


def test_multirate_and_net_value_are_refused(tmp_path, capsys):
    path = tmp_path / "wide.yaml"
    path.write_text(WIDE)
    assert main(["evaluate", str(path), "--method", "peaked-fixed-point"]) == 2
    err = capsys.readouterr().err
    assert (f"netdim: error: {path}: --method peaked-fixed-point: demand 'A-C' has bandwidth "
            "2; the peaked model handles single-unit calls only") in err
    assert main(["evaluate", str(path), "--json"]) == 0  # the default: the plain fixed point
    assert json.loads(capsys.readouterr().out)["method"] == "fixed-point"
    assert main(["size", str(path), "--model", "peaked-fixed-point", "--quiet"]) == 2
    err = capsys.readouterr().err
    assert f"{path}: --model peaked-fixed-point: demand 'A-C' has bandwidth 2" in err
    assert main(["size", str(VILLAGES), "--model", "peaked-fixed-point", "--objective",
                 "net-value"]) == 2
    assert ("netdim: error: --objective: model 'peaked-fixed-point' sizes for cost only"
            in capsys.readouterr().err)

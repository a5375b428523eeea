"""Every bundled network checks, evaluates by all three methods (exact where small enough,
a clear refusal otherwise), and runs the accuracy check.

Outside references: on the small network the exact Markov chain is the reference the
simulation must agree with (within its 99.9% interval: a false failure about once in a
thousand demands); elsewhere these are end-to-end checks of the command line.
"""

import json
import pathlib

import pytest

from netdim.cli import main
from netdim.evaluate import evaluate
from netdim.evaluate.exact import count_states
from netdim.netfile import read_network

NETWORKS = sorted((pathlib.Path(__file__).resolve().parent.parent / "networks").glob("*.yaml"))


def test_there_are_demo_networks():
    names = {p.stem for p in NETWORKS}
    assert {"regional-telephone", "campus-parking", "three-villages"} <= names


@pytest.mark.parametrize("path", NETWORKS, ids=[p.stem for p in NETWORKS])
def test_demo_checks_and_evaluates(path, capsys):
    assert main(["check", str(path)]) == 0
    capsys.readouterr()
    assert main(["evaluate", str(path), "--json"]) == 0  # the demos ship meeting targets
    out = json.loads(capsys.readouterr().out)
    # alternate routing: the peaked fixed point is the default (docs/measurements/peaked.md)
    want = "peaked-fixed-point" if read_network(path).routing.policy == "alternate" \
        else "fixed-point"
    assert out["method"] == want and out["all_met"]


@pytest.mark.slow
@pytest.mark.parametrize("path", NETWORKS, ids=[p.stem for p in NETWORKS])
def test_demo_by_simulation_and_exact(path, capsys):
    net = read_network(path)
    sim = evaluate(net, method="simulate", seed=3, calls=200_000, confidence=0.999)
    assert sim.blocking_interval.shape == (len(net.demands), 2)
    if count_states(net, limit=200_001) <= 200_000:
        ex = evaluate(net, method="exact")
        lo, hi = sim.blocking_interval.T
        assert ((ex.blocking >= lo) & (ex.blocking <= hi)).all()
    else:
        assert main(["evaluate", str(path), "--method", "exact"]) == 2
        err = capsys.readouterr().err
        assert "states, more than the limit" in err and "use method 'simulate'" in err
        assert err.count("\n") == 1  # one line, no traceback


@pytest.mark.slow
@pytest.mark.parametrize("path", NETWORKS, ids=[p.stem for p in NETWORKS])
def test_demo_accuracy_check(path, capsys):
    assert main(["evaluate", str(path), "--check", "--calls", "100000", "--seed", "2",
                 "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert len(out["demands"]) == len(read_network(path).demands)

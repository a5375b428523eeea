"""Progress of ``netdim size``: a few summary lines by default, the whole trace with -v.

Outside reference: the messages the library itself hands its progress callback
(``netdim.dimension(..., progress=...)``), recorded here, against what the command prints;
the summary rule (first and last message of each stage) restated in the test.
"""

from __future__ import annotations

import pathlib
import re

import pytest

import netdim
from netdim.cli import main
from netdim.evaluate import default_method
from netdim.report.progress import ProgressSummary, stage_of

NETWORKS = pathlib.Path(__file__).parent.parent / "networks"


def _untimed(messages):
    """The messages with their timings (``0.01 s``) blanked, and the counts a time limit
    cuts (``after 629 of 1425 plans``): they differ from run to run."""
    out = [re.sub(r"\d+(\.\d+)? s\b", "T s", m) for m in messages]
    return [re.sub(r"after \d+ of (\d+) plans", r"after N of \1 plans", m) for m in out]


class Clock:
    def __init__(self):
        self.now = 0.0

    def __call__(self):
        return self.now


def test_summary_shows_first_and_last_of_each_stage():
    shown, clock = [], Clock()
    p = ProgressSummary(shown.append, clock=clock, every=10.0)
    messages = ["iteration 1: a", "iteration 2: b", "trying without link 'X'", "iteration 1: c",
                "local search: done", "lower bound: cuts", "round 0: LP 1", "round 1: LP 2",
                "MILP round 1: 3", "verifying by simulation", "verify round 1: again",
                "iteration 1: d"]
    for m in messages:
        clock.now += 1.0
        p(None, m)
    p.close()
    assert [stage_of(m) for m in messages] == ["sizing"] * 5 + ["bound"] * 4 + \
        ["verify"] * 2 + ["sizing"]
    assert shown == ["iteration 1: a", "local search: done", "lower bound: cuts",
                     "MILP round 1: 3", "verifying by simulation", "verify round 1: again",
                     "iteration 1: d"]


def test_a_long_stage_shows_a_line_now_and_then():
    shown, clock = [], Clock()
    p = ProgressSummary(shown.append, clock=clock, every=10.0)
    for k in range(30):
        clock.now = 4.0 * k
        p(None, f"round {k}: LP")
    p.close()
    # every 10 s at most: the first, then rounds at 12, 24, ... s, and the last
    assert shown[0] == "round 0: LP" and shown[-1] == "round 29: LP"
    assert len(shown) == 1 + 116 // 12 + 1


def test_verbose_passes_every_message_with_its_share():
    shown = []
    p = ProgressSummary(shown.append, verbose=True)
    p(0.5, "round 1: LP")
    p(None, "round 2: LP")
    p.close()
    assert shown == ["50% round 1: LP", "round 2: LP"]


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_size_prints_a_summary_and_the_whole_trace_with_v(capsys):
    net = NETWORKS / "three-villages.yaml"
    recorded = []
    network = netdim.read_network(net)
    # the model the command picks when none is named (the peaked fixed point here)
    model = default_method(network)
    netdim.dimension(network, model=model, bound_time=2.0,
                     progress=lambda f, m: recorded.append(m))
    recorded = _untimed(recorded)
    assert main(["size", str(net), "--bound-time", "2", "-v"]) == 0
    err = capsys.readouterr().err.splitlines()
    trace = _untimed(line.removeprefix("netdim size: ") for line in err
                     if not line.startswith(("netdim size: note:", "netdim size: warning:")))
    assert trace == recorded
    assert main(["size", str(net), "--bound-time", "2"]) == 0
    summary = _untimed(line.removeprefix("netdim size: ")
                       for line in capsys.readouterr().err.splitlines()
                       if not line.startswith(("netdim size: note:", "netdim size: warning:")))
    stages = [stage_of(m) for m in recorded]
    starts = [k for k in range(len(recorded)) if k == 0 or stages[k] != stages[k - 1]]
    ends = [k - 1 for k in starts[1:]] + [len(recorded) - 1]
    want = [recorded[k] for k in sorted(set(starts) | set(ends))]
    # lines a slow machine adds within a long stage come from the recorded ones, in order
    assert [m for m in summary if m in want] == want
    assert set(summary) <= set(recorded)
    assert len(summary) < len(recorded)

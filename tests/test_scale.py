"""What large runs say about themselves: the sizing loop that stops without settling, and
the bound's safety stop counting the time spent building its model.

The loop's rule (docs/design/sizing.md): under fixed routing it has settled when one MILP
chooses the same capacities as the one before, so a single iteration can never have
settled; the check values below follow from that rule, not from netdim's figures.
"""

from __future__ import annotations

import importlib
import pathlib
import re
import time

from netdim.cli import main
from netdim.dimension import dimension
from netdim.model import Demand, Link, Network, Route, Site
from netdim.netfile import read_network

ROOT = pathlib.Path(__file__).resolve().parents[1]


def line():
    """Two trunk groups in a line A-B-C with through traffic (demo data)."""
    sites = (Site("A"), Site("B"), Site("C"))
    links = (Link("AB", ("A", "B"), module=1), Link("BC", ("B", "C"), module=1))
    demands = (
        Demand("AB", ("A", "B"), 20.0, routes=(Route((0,), (1.0,)),), target=0.01),
        Demand("BC", ("B", "C"), 15.0, routes=(Route((1,), (1.0,)),), target=0.01),
        Demand("AC", ("A", "C"), 10.0, routes=(Route((0, 1), (1.0, 1.0)),), target=0.01),
    )
    return Network("line", sites, links, demands)


UNSETTLED = (r"the sizing loop stopped at its limit of 1 iterations without settling \(each "
             r"MILP still chose other capacities than the one before\); the local search "
             r"starts from the last iteration's plan")


def test_a_loop_cut_at_its_limit_says_so_and_what_it_returns():
    lines = []
    plan = dimension(line(), max_iter=1, progress=lambda f, m: lines.append(m))
    assert plan.iterations == 1
    assert any(re.fullmatch(UNSETTLED, w) for w in plan.warnings), plan.warnings
    assert any(m.startswith("the MILP iterations stopped at their limit of 1 without "
                            "settling") for m in lines), lines


def test_a_settled_loop_says_nothing_of_it():
    plan = dimension(line())
    assert plan.iterations < 20
    assert not any("without settling" in w for w in plan.warnings)


def test_the_bound_time_counts_building_the_model(monkeypatch):
    """A model that takes longer to build than the whole safety stop stops the bound's
    rounds after the first, and the seconds reported include the building."""
    lfb = importlib.import_module("netdim.dimension.loss_flow_bound")
    real = lfb.LossFlowData

    def slow(*args, **kw):
        time.sleep(0.5)
        return real(*args, **kw)

    monkeypatch.setattr(lfb, "LossFlowData", slow)
    net = read_network(ROOT / "networks" / "regional-telephone.yaml")
    bound = lfb.loss_flow_bound(net, time_limit=0.3)
    assert bound is not None
    assert bound.stopped_by_time
    assert bound.rounds == 1
    assert bound.seconds >= 0.5


def _many_links(tmp_path, n=60, capacity=2):
    """``n`` separate one-link trunk groups, 5 E each (demo data)."""
    text = ["name: many groups", "defaults: {target: 0.01}", "sites:"]
    text += [f"  - {{id: S{i}}}" for i in range(n + 1)]
    text.append("links:")
    text += [f"  - {{id: L{i}, ends: [S0, S{i + 1}], capacity: {capacity}, module: 1}}"
             for i in range(n)]
    text.append("demands:")
    text += [f"  - {{id: D{i}, between: [S0, S{i + 1}], traffic: 5}}" for i in range(n)]
    path = tmp_path / "many.yaml"
    path.write_text("\n".join(text) + "\n")
    return str(path)


def _table_rows(out, prefix):
    return [ln for ln in out.splitlines() if ln.split() and re.fullmatch(prefix + r"\d+",
                                                                         ln.split()[0])]


def test_evaluate_on_a_large_network_prints_the_worst_rows_and_names_a_few(tmp_path, capsys):
    # Every demand misses: E(5, 2) = 12.5 / 18.5 = 0.676 > 0.01 (the Erlang B formula).
    path = _many_links(tmp_path)
    assert main(["evaluate", path]) == 1
    out, err = capsys.readouterr()
    assert len(_table_rows(out, "D")) == 40 and len(_table_rows(out, "L")) == 40
    assert "Demands (60, worst first), worst 40 shown" in out
    assert "(tables cut to their worst 40 rows; --all prints every row" in out
    names = ", ".join(f"D{i}" for i in range(20))
    assert err.strip().splitlines() == [
        f"netdim evaluate: 60 of 60 demands missed the target: {names} and 40 more "
        "(--csv or --json lists every demand)"]
    assert main(["evaluate", path, "--all"]) == 1
    out, _ = capsys.readouterr()
    assert len(_table_rows(out, "D")) == 60 and len(_table_rows(out, "L")) == 60
    assert "tables cut" not in out


def test_size_on_a_large_network_prints_the_busiest_links_first(tmp_path, capsys):
    path = _many_links(tmp_path)
    assert main(["size", path, "--quiet"]) == 0
    out, _ = capsys.readouterr()
    links = _table_rows(out, "L")
    assert len(links) == 40 and len(_table_rows(out, "D")) == 40
    assert "Links (60, busiest first, 40 shown)" in out
    util = [float(ln.split()[4]) for ln in links]
    assert util == sorted(util, reverse=True)
    assert main(["size", path, "--quiet", "--all"]) == 0
    out, _ = capsys.readouterr()
    assert len(_table_rows(out, "L")) == 60 and "tables cut" not in out


def test_failures_on_a_large_network_name_a_few_on_stderr(tmp_path, capsys):
    # Each cut leaves its one demand with no route: lost, so every failure misses
    # (common practice, no source: a demand with no route loses every call).
    path = _many_links(tmp_path, capacity=20)
    assert main(["failures", path, "--quiet"]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("netdim failures: 60 of 60 failures leave a "
                                               "demand over its target: ")
    assert err[0].endswith(" and 40 more (--csv or --json lists every failure)")
    assert err[0].count(", ") == 19


def test_the_time_line_of_size_covers_the_whole_command(tmp_path, capsys):
    path = _many_links(tmp_path, n=3)
    assert main(["size", path, "--quiet"]) == 0
    out = capsys.readouterr().out
    m = re.search(r"(?m)^time +(\d+\.\d) s  \(the whole command; sizing (\d+\.\d) s\)$", out)
    assert m, out
    assert float(m.group(1)) >= float(m.group(2))

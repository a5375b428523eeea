"""Tests of ``netdim evaluate`` (the command line over the fixed-point evaluator)."""

from __future__ import annotations

import csv
import json

import pytest

from netdim.cli import main
from netdim.report.text import CAUTION


def erlang_b_ref(a, c):
    """Erlang B recursion (ITU-T E.521; common practice)."""
    e = 1.0
    for n in range(1, c + 1):
        e = a * e / (n + a * e)
    return e


ONE_LINK = """\
name: One trunk group
sites:
  - {id: EAST}
  - {id: WEST}
links:
  - {id: E-W, ends: [EAST, WEST], capacity: CAP}
demands:
  - {id: EW, between: [EAST, WEST], traffic: 5.0, target: 0.02}
"""

TWO_DEMANDS = """\
name: Two routes
sites:
  - {id: AMBER}
  - {id: BIRCH}
  - {id: CEDAR}
links:
  - {id: A-B, ends: [AMBER, BIRCH], capacity: 10}
  - {id: B-C, ends: [BIRCH, CEDAR], capacity: 4}
demands:
  - {id: AB, between: [AMBER, BIRCH], traffic: 3.0, target: 0.01}
  - {id: BC, between: [BIRCH, CEDAR], traffic: 3.0, target: 0.01}
"""


def write(tmp_path, text, name="net.yaml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return str(p)


def test_text_report_met(tmp_path, capsys):
    # Source: E(5, 10) = 0.01838 by the Erlang B recursion (ITU-T E.521): target 0.02 met.
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert main(["evaluate", path]) == 0
    out = capsys.readouterr().out
    assert "EW" in out and "E-W" in out
    assert f"{erlang_b_ref(5.0, 10):.5f}" in out
    assert out.rstrip().endswith(CAUTION)


def test_exit_1_names_unmet(tmp_path, capsys):
    # Source: E(5, 8) = 0.0700 > 0.02 (Erlang B recursion, ITU-T E.521).
    path = write(tmp_path, ONE_LINK.replace("CAP", "8"))
    assert main(["evaluate", path]) == 1
    captured = capsys.readouterr()
    err = captured.err.strip().splitlines()
    assert err == ["netdim evaluate: 1 of 1 demand missed the target: EW"]
    assert "MISSED" in captured.out
    assert "Of 1 demand: 0 met, 1 missed." in captured.out


def test_worst_first(tmp_path, capsys):
    # Source: E(3, 4) = 0.2061 > E(3, 10) = 0.0008 (Erlang B recursion, ITU-T E.521): the
    # B-C demand and link come first.
    path = write(tmp_path, TWO_DEMANDS)
    assert main(["evaluate", path]) == 1
    out = capsys.readouterr().out
    demands = out[out.index("Demands"):out.index("Links")]
    links = out[out.index("Links"):]
    assert demands.index("BC") < demands.index("AB")
    assert links.index("B-C") < links.index("A-B")


def test_json_contract(tmp_path, capsys):
    # Source: Erlang B recursion (ITU-T E.521) for the value; keys from the contract.
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert main(["evaluate", path, "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    for key in ("demands", "links", "method", "iterations", "residual", "warnings"):
        assert key in data
    d = data["demands"][0]
    assert set(d) >= {"id", "offered", "carried", "blocking", "target", "met"}
    assert d["blocking"] == pytest.approx(erlang_b_ref(5.0, 10), rel=1e-10)
    assert d["carried"] == pytest.approx(5.0 * (1 - erlang_b_ref(5.0, 10)), rel=1e-10)
    link = data["links"][0]
    assert set(link) >= {"id", "capacity", "offered", "carried", "blocking", "utilisation"}
    assert link["utilisation"] == pytest.approx(link["carried"] / 10)
    assert data["method"] == "fixed-point"


def test_conservative_flag(tmp_path, capsys):
    # Source: product bound (Whitt 1985): on one link it equals Erlang B of the load.
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert main(["evaluate", path, "--conservative", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["method"] == "conservative"
    assert data["demands"][0]["blocking"] == pytest.approx(erlang_b_ref(5.0, 10), rel=1e-10)


def test_csv_files(tmp_path, capsys):
    # Source: Erlang B recursion (ITU-T E.521); files read back with the csv module.
    path = write(tmp_path, TWO_DEMANDS)
    out_dir = tmp_path / "out" / "nested"
    assert main(["evaluate", path, "--csv", str(out_dir)]) == 1
    with open(out_dir / "demands.csv", newline="") as f:
        rows = list(csv.DictReader(f))
    assert [r["id"] for r in rows] == ["BC", "AB"]
    assert float(rows[0]["blocking"]) == pytest.approx(erlang_b_ref(3.0, 4), rel=1e-10)
    assert rows[0]["met"] == "false" and rows[1]["met"] == "true"
    with open(out_dir / "links.csv", newline="") as f:
        links = list(csv.DictReader(f))
    assert {r["id"] for r in links} == {"A-B", "B-C"}
    assert set(links[0]) >= {"id", "capacity", "offered", "carried", "blocking", "utilisation"}
    assert not [p for p in out_dir.iterdir() if p.name.startswith(".netdim-")]


def test_csv_dir_is_a_file(tmp_path, capsys):
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    blocker = tmp_path / "taken"
    blocker.write_text("x")
    assert main(["evaluate", path, "--csv", str(blocker)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "taken" in err


def test_missing_file(tmp_path, capsys):
    assert main(["evaluate", str(tmp_path / "nowhere.yaml")]) == 2
    err = capsys.readouterr().err
    assert "nowhere.yaml" in err and "cannot read" in err


def test_option_for_other_method(tmp_path, capsys):
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert main(["evaluate", path, "--seed", "3"]) == 2
    assert "--seed: applies to --method simulate only" in capsys.readouterr().err
    assert main(["evaluate", path, "--conservative", "--method", "exact"]) == 2
    assert "--conservative: conflicts with --method exact" in capsys.readouterr().err
    assert main(["evaluate", path, "--check", "--method", "exact"]) == 2
    assert "--check: compares the methods itself" in capsys.readouterr().err


def test_bad_method_name(tmp_path, capsys):
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    with pytest.raises(SystemExit) as ei:
        main(["evaluate", path, "--method", "guess"])
    assert ei.value.code == 2
    assert "invalid choice" in capsys.readouterr().err


def test_no_convergence_is_exit_3(tmp_path, capsys):
    # Source: common practice, no source (a solver stopped early is an error, not a result,
    # and not bad input either: README gives it exit status 3).
    # a through demand over both links needs more than one sweep
    chain = TWO_DEMANDS + "  - {id: AC, between: [AMBER, CEDAR], traffic: 3.0, " \
        "routes: [[A-B, B-C]]}\n"
    path = write(tmp_path, chain, "chain.yaml")
    assert main(["evaluate", path, "--max-iter", "1"]) == 3
    err = capsys.readouterr().err
    assert "did not converge in 1 iterations" in err and err.count("\n") == 1


def test_check_json(tmp_path, capsys):
    # Source: E(5, 10) = 0.01838 (Erlang B recursion, ITU-T E.521): the fixed point and the
    # exact method both give it on one link; the simulation only has to run.
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert main(["evaluate", path, "--check", "--json", "--seed", "1", "--calls", "20000",
                 "--quiet"]) == 0
    data = json.loads(capsys.readouterr().out)
    d = data["demands"][0]
    assert d["fixed_point"] == pytest.approx(erlang_b_ref(5.0, 10), rel=1e-10)
    assert d["exact"] == pytest.approx(erlang_b_ref(5.0, 10), rel=1e-8)
    assert main(["evaluate", path, "--check", "--tol", "1e-6"]) == 2
    assert "--tol: does not apply to --check" in capsys.readouterr().err


def test_bistable_network_reports_both(tmp_path, capsys):
    # Source: Gibbens, Hunt and Kelly 1990 (bistability under alternate routing without
    # reservation); the case (6 sites, 30 circuits, 22.2 E per pair, 4 two-link alternates)
    # was computed for tests/test_fixed_point.py.
    import itertools
    names = ["ALDER", "BEECH", "CEDAR", "DOGWOOD", "ELM", "FIR"]
    lines = ["name: Six exchanges", "sites:"] + [f"  - {{id: {n}}}" for n in names]
    lines.append("links:")
    for a, b in itertools.combinations(names, 2):
        lines.append(f"  - {{id: {a}-{b}, ends: [{a}, {b}], capacity: 30}}")
    lines.append("demands:")
    for i, j in itertools.combinations(range(6), 2):
        a, b = names[i], names[j]
        routes = [f"[{a}-{b}]"]
        for k in [k for k in range(6) if k not in (i, j)]:
            first = "-".join(sorted([a, names[k]], key=names.index))
            second = "-".join(sorted([names[k], b], key=names.index))
            routes.append(f"[{first}, {second}]")
        lines.append(f"  - {{between: [{a}, {b}], traffic: 22.2, routes: [{', '.join(routes)}]}}")
    lines.append("routing: {policy: alternate, reservation: 0}")
    path = write(tmp_path, "\n".join(lines) + "\n")
    # the plain fixed point's second solution (the peaked one, the default under alternate
    # routing, has one solution here: docs/theory/peaked-overflow.md, "Bistability")
    main(["evaluate", path, "--method", "fixed-point"])
    out = capsys.readouterr().out
    assert "status: bistable" in out
    assert "two solutions" in out and "second solution" in out
    assert "'alternative'" not in out  # text output does not point at a JSON key


# -- three-way verdicts, intervals, seed (issue 12) --------------------------------------------
SMALL_AND_BIG = """\
name: Small beside big
sites: [{id: NORTH}, {id: SOUTH}, {id: EAST}]
links:
  - {id: N-S, ends: [NORTH, SOUTH], capacity: 7}
  - {id: S-E, ends: [SOUTH, EAST], capacity: 120}
  - {id: S-W, ends: [SOUTH, WEST], capacity: 1}
demands:
  - {id: SMALL, between: [NORTH, SOUTH], traffic: 2.0, target: 0.001}
  - {id: BIG, between: [SOUTH, EAST], traffic: 100.0, target: 0.02}
"""
OVERLOAD = ("  - {id: OVER, between: [SOUTH, WEST], traffic: 5.0, target: 0.01}\n")


def _sb(tmp_path, overload=False):
    text = SMALL_AND_BIG.replace("[{id: NORTH}, {id: SOUTH}, {id: EAST}]",
                                 "[{id: NORTH}, {id: SOUTH}, {id: EAST}, {id: WEST}]")
    return write(tmp_path, text + (OVERLOAD if overload else ""), "sb.yaml")


def test_simulation_verdicts_are_three_way(tmp_path, capsys):
    # Source: Erlang B recursion (ITU-T E.521): E(2, 7) = 0.0034 > 0.001 (SMALL must not be
    # met), E(5, 1) = 0.83 > 0.01 (OVER missed). 20000 calls (batches of 9 h, over 5 mean
    # holdings) leave SMALL with no loss seen (seed 3): its interval is the exact binomial
    # one (Clopper and Pearson 1934), which contains the target: unclear.
    assert erlang_b_ref(2.0, 7) > 0.003 and erlang_b_ref(5.0, 1) > 0.8
    path = _sb(tmp_path, overload=True)
    assert main(["evaluate", path, "--method", "simulate", "--calls", "20000", "--seed", "3"]) == 1
    out, err = capsys.readouterr()
    rows = {line.split()[0]: line.split()[-1] for line in out.splitlines()
            if line.split() and line.split()[0] in ("SMALL", "BIG", "OVER")}
    assert rows["SMALL"] == "unclear" and rows["OVER"] == "MISSED"
    assert rows["BIG"] == "met"  # E(100, 120) = 0.0057 < 0.02 (Erlang B recursion)
    assert "Of 3 demands: 1 met, 1 missed, 1 unclear." in out
    assert "missed: OVER\nunclear (the confidence interval contains the target): SMALL" in out
    assert err.strip().splitlines() == [
        "netdim evaluate: 1 of 3 demands missed the target: OVER",
        "netdim evaluate: 1 of 3 demands unclear (the interval contains the target): SMALL"]
    assert main(["evaluate", path, "--method", "simulate", "--calls", "20000", "--seed", "3",
                 "--json"]) == 1
    data = json.loads(capsys.readouterr().out)
    small = next(d for d in data["demands"] if d["id"] == "SMALL")
    assert small["verdict"] == "unclear" and small["met"] is False
    assert small["blocking"] == 0.0 and small["blocking_interval"][1] > 0.001
    assert data["all_met"] is False


def test_seed_is_printed_when_none_given(tmp_path, capsys):
    # Source: reproducibility contract of the seed (common practice, no source).
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    main(["evaluate", path, "--method", "simulate", "--calls", "4000", "--json"])
    first = json.loads(capsys.readouterr().out)
    seed = first["details"]["seed"]
    assert isinstance(seed, int)
    main(["evaluate", path, "--method", "simulate", "--calls", "4000", "--seed", str(seed),
          "--json"])
    again = json.loads(capsys.readouterr().out)
    assert again["demands"] == first["demands"]
    main(["evaluate", path, "--method", "simulate", "--calls", "4000"])
    assert "holding times, seed " in capsys.readouterr().out


def test_check_says_no_blocked_calls_seen(tmp_path, capsys):
    # Source: E(2, 7) (Erlang B recursion) is about 3e-3 and the exact method agrees; no loss
    # of SMALL is seen in 5000 calls, which the flag column says instead of flagging the
    # fixed point outside a [0, 0] interval.
    path = _sb(tmp_path)
    status = main(["evaluate", path, "--compare", "--calls", "5000", "--seed", "4", "--quiet"])
    out = capsys.readouterr().out
    row = next(line for line in out.splitlines() if line.startswith("SMALL"))
    assert "no blocked calls seen" in row and "fixed point outside" not in row
    assert "verdict (exact)" in out and "Simulation seed 4" in out
    assert status == 1  # SMALL misses its target by the exact method
    assert main(["evaluate", path, "--check", "--calls", "5000", "--seed", "4", "--json",
                 "--quiet"]) == 1
    data = json.loads(capsys.readouterr().out)
    small = next(d for d in data["demands"] if d["id"] == "SMALL")
    assert small["note"] == "no blocked calls seen" and small["blocked_calls"] == 0
    assert small["outside"] is False and small["verdict"] == "missed"
    assert data["verdict_method"] == "exact" and data["seed"] == 4


def test_loose_tolerance_prints_no_bistability(capsys):
    # Source: see tests/test_fixed_point.py::test_loose_tolerance_is_not_bistability.
    import pathlib

    path = str(pathlib.Path(__file__).resolve().parent.parent / "networks" /
               "three-villages.yaml")
    for tol in ("1e-2", "1e-4"):
        assert main(["evaluate", path, "--tol", tol]) == 0
        out = capsys.readouterr().out
        assert "bistable" not in out and "status: converged" in out


def test_cv_without_lognormal_is_refused(tmp_path, capsys):
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert main(["evaluate", path, "--method", "simulate", "--cv", "2"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1
    assert "cv: applies to holding_law 'lognormal' only" in err


def test_one_demand_reads_in_the_singular(tmp_path, capsys):
    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert main(["evaluate", path]) == 0
    out = capsys.readouterr().out
    assert "The 1 demand meets its target." in out and "1 demands" not in out


@pytest.mark.parametrize("umask,mode", [(0o022, 0o644), (0o027, 0o640)])
def test_csv_files_get_the_usual_mode(tmp_path, capsys, umask, mode):
    # Source: POSIX open(2): a new file gets 0666 less the umask (mkstemp alone gives 0600).
    import os

    path = write(tmp_path, TWO_DEMANDS)
    out_dir = tmp_path / "out"
    old = os.umask(umask)
    try:
        main(["evaluate", path, "--csv", str(out_dir)])
    finally:
        os.umask(old)
    for name in ("demands.csv", "links.csv"):
        assert (out_dir / name).stat().st_mode & 0o777 == mode
    with open(out_dir / "demands.csv", newline="") as f:
        rows = list(csv.DictReader(f))
    assert [r["verdict"] for r in rows] == ["missed", "met"]


# -- work refused over a stated limit (issue 19) -----------------------------------------------
def test_exact_on_huge_links_is_refused(tmp_path, capsys):
    text = ("name: Huge groups\nsites: [{id: A}, {id: B}, {id: C}]\nlinks:\n"
            "  - {id: A-B, ends: [A, B], capacity: 1000000}\n"
            "  - {id: B-C, ends: [B, C], capacity: 1000000}\n"
            "demands:\n  - {id: AB, between: [A, B], traffic: 1.0}\n"
            "  - {id: BC, between: [B, C], traffic: 1.0}\n"
            "  - {id: AC, between: [A, C], traffic: 1.0, routes: [[A-B, B-C]]}\n")
    path = write(tmp_path, text)
    assert main(["evaluate", path, "--method", "exact"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1
    assert "states, more than the limit 200000; use method 'simulate'" in err


def test_simulation_of_fast_and_slow_calls_is_refused(tmp_path, capsys):
    text = ("name: Fast and slow\nsites: [{id: A}, {id: B}]\nlinks:\n"
            "  - {id: A-B, ends: [A, B], capacity: 10}\ndemands:\n"
            "  - {id: FAST, between: [A, B], traffic: 2.0, holding: 1.0e-15}\n"
            "  - {id: SLOW, between: [A, B], traffic: 2.0, holding: 1}\n")
    path = write(tmp_path, text)
    assert main(["evaluate", path, "--method", "simulate"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "more than the limit 1e+09" in err


def test_option_applicability_comes_from_the_library(tmp_path, capsys):
    from netdim.evaluate import METHOD_OPTIONS

    path = write(tmp_path, ONE_LINK.replace("CAP", "10"))
    assert "max_iter" not in METHOD_OPTIONS["exact"]
    assert main(["evaluate", path, "--method", "exact", "--max-iter", "5"]) == 2
    assert ("--max-iter: applies to --method fixed-point or --method conservative or "
            "--method peaked-fixed-point only, not --method exact") in capsys.readouterr().err

"""``--csv DIR`` on ``netdim erlang`` and ``netdim check``: the files hold what ``--json``
prints, with the usual mode, and nothing is written when the command fails."""

from __future__ import annotations

import csv
import json
import os
import re

import mpmath as mp
import pytest
from erlang_mpmath import mp_erlang

from netdim.cli import main

EXAMPLE = os.path.join(os.path.dirname(__file__), "..", "examples", "campus_day.yaml")


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def read_csv(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def erlang_by_sum(a, n):
    # Erlang's loss formula written out, E = (A^n / n!) / sum_{k=0..n} A^k / k!
    # (A. K. Erlang 1917; ITU-T Recommendation E.521), at 50 digits in mpmath
    with mp.workdps(50):
        a = mp.mpf(a)
        terms = [a ** k / mp.factorial(k) for k in range(n + 1)]
        return terms[-1] / mp.fsum(terms)


@pytest.mark.parametrize("argv", [
    ["--traffic", "0.5:30:0.5", "--servers", "12"],
    ["--servers", "1:40:3", "--target", "0.01"],
    ["--traffic", "20", "--target", "0.001:0.05:0.007"],
    ["--traffic", "4", "--servers", "3.5"],
])
def test_erlang_csv_equals_json(tmp_path, capsys, argv):
    # the --json rows are the reference: same keys, same numbers to the last bit
    code, out, _ = run(capsys, "erlang", *argv, "--json")
    assert code == 0
    rows = json.loads(out)
    rows = rows if isinstance(rows, list) else [rows]
    code, _, _ = run(capsys, "erlang", *argv, "--csv", str(tmp_path / "out"))
    assert code == 0
    got = read_csv(tmp_path / "out" / "erlang.csv")
    assert [list(r) for r in got] == [list(r) for r in rows]
    assert [{k: float(v) for k, v in r.items()} for r in got] == rows
    assert not any("%" in v for r in got for v in r.values())


def test_erlang_csv_blocking_matches_mpmath(tmp_path, capsys):
    # source: Erlang's loss formula (ITU-T E.521) summed in mpmath (erlang_by_sum), and for
    # real servers the continuous extension A^n e^-A / Gamma(n + 1, A) (tests/erlang_mpmath)
    out = tmp_path / "out"
    assert run(capsys, "erlang", "--traffic", "1:100:3", "--servers", "60",
               "--csv", str(out))[0] == 0
    rows = read_csv(out / "erlang.csv")
    assert len(rows) == 34
    for r in rows:
        want = float(erlang_by_sum(float(r["traffic"]), 60))
        assert float(r["blocking"]) == pytest.approx(want, rel=1e-12)
    assert run(capsys, "erlang", "--traffic", "7.5", "--servers", "6.5",
               "--csv", str(out))[0] == 0
    (row,) = read_csv(out / "erlang.csv")
    assert float(row["blocking"]) == pytest.approx(float(mp_erlang(7.5, 6.5)), rel=1e-12)


def test_erlang_text_table_has_one_format_per_column_and_a_legend(capsys):
    # issue 16: one format per column, units in headers, a legend line
    code, out, _ = run(capsys, "erlang", "--traffic", "100", "--servers", "10:200:50")
    lines = out.splitlines()
    assert code == 0 and lines[0].split()[:2] == ["traffic", "(E)"]
    blocking = [line.split()[2] for line in lines[2:6]]
    assert all("e" in b and len(b) == len(blocking[0]) for b in blocking)
    assert lines[-1].strip().startswith("blocking: share of offered calls lost")
    code, out, _ = run(capsys, "erlang", "--traffic", "0.5:2:0.5", "--servers", "3")
    assert [line.split()[0] for line in out.splitlines()[2:6]] == ["0.5", "1.0", "1.5", "2.0"]


def test_check_csv_equals_json(tmp_path, capsys):
    code, out, _ = run(capsys, "check", EXAMPLE, "--routes", "--json")
    assert code == 0
    data = json.loads(out)
    listing = data.pop("demand_routes")
    code, _, _ = run(capsys, "check", EXAMPLE, "--routes", "--csv", str(tmp_path))
    assert code == 0
    (summary,) = read_csv(tmp_path / "summary.csv")
    assert set(summary) == set(data)
    for key, value in data.items():
        cell = summary[key]
        if isinstance(value, bool):
            assert cell == str(value).lower(), key
        elif value is None:
            assert cell == "", key
        elif isinstance(value, list):
            assert (cell.split(";") if cell else []) == value, key
        elif isinstance(value, (int, float)):
            assert float(cell) == value, key
        else:
            assert cell == value, key
    # routes.csv rebuilt into the --json listing (one row per route step)
    rebuilt = {}
    for r in read_csv(tmp_path / "routes.csv"):
        entry = rebuilt.setdefault(r["demand"], {
            "demand": r["demand"], "between": [r["site_a"], r["site_b"]],
            "generated": r["generated"] == "true", "routes": []})
        if r["route"] == "":
            continue
        k, step = int(r["route"]), int(r["step"])
        if len(entry["routes"]) < k:
            entry["routes"].append({"links": [], "holdings": []})
        assert step == len(entry["routes"][k - 1]["links"]) + 1
        entry["routes"][k - 1]["links"].append(r["link"])
        entry["routes"][k - 1]["holdings"].append(float(r["holding"]))
    assert list(rebuilt.values()) == listing


def test_check_without_routes_writes_the_summary_only(tmp_path, capsys):
    assert run(capsys, "check", EXAMPLE, "--csv", str(tmp_path / "out"))[0] == 0
    assert sorted(os.listdir(tmp_path / "out")) == ["summary.csv"]


@pytest.mark.parametrize("umask,mode", [(0o022, 0o644), (0o027, 0o640)])
def test_csv_files_get_the_usual_mode(tmp_path, capsys, umask, mode):
    # source: POSIX open(2): a new file gets 0666 less the umask
    old = os.umask(umask)
    try:
        assert run(capsys, "erlang", "--traffic", "10", "--servers", "5:9:1",
                   "--csv", str(tmp_path))[0] == 0
        assert run(capsys, "check", EXAMPLE, "--routes", "--csv", str(tmp_path))[0] == 0
    finally:
        os.umask(old)
    for name in ("erlang.csv", "summary.csv", "routes.csv"):
        assert (tmp_path / name).stat().st_mode & 0o777 == mode
    assert not [p for p in os.listdir(tmp_path) if p.startswith(".netdim-")]


@pytest.mark.parametrize("argv", [
    ["erlang", "--traffic", "10", "--servers", "5:9:1"],
    ["check", EXAMPLE, "--routes"],
])
def test_csv_dir_that_is_a_file(tmp_path, capsys, argv):
    blocker = tmp_path / "taken"
    blocker.write_text("mine\n")
    code, out, err = run(capsys, *argv, "--csv", str(blocker))
    assert code == 2 and out == ""
    assert err.count("\n") == 1
    assert err.startswith(f"netdim: error: {blocker}: is a file, not a directory for CSV")
    assert blocker.read_text() == "mine\n"


@pytest.mark.parametrize("argv,message", [
    (["erlang", "--traffic", "10", "--target", "1.5"], r"--target: must be in \(0, 1\)"),
    (["erlang", "--traffic", "1:3:1", "--servers", "1:3:1"], "only one of the options"),
    (["check", "NOFILE"], "NOFILE"),
])
def test_nothing_written_when_the_command_fails(tmp_path, capsys, argv, message):
    out_dir = tmp_path / "out"
    argv = [str(tmp_path / "nowhere.yaml") if a == "NOFILE" else a for a in argv]
    code, _, err = run(capsys, *argv, "--csv", str(out_dir))
    assert code == 2
    assert err.count("\n") == 1
    assert re.search(message.replace("NOFILE", "nowhere.yaml"), err)
    assert not out_dir.exists()


def test_check_of_a_broken_file_writes_nothing(tmp_path, capsys):
    bad = tmp_path / "bad.yaml"
    bad.write_text("name: x\nsites: [A, B]\nlinks:\n  - {id: A-B, between: [A, C]}\n")
    code, out, err = run(capsys, "check", str(bad), "--csv", str(tmp_path / "out"))
    assert code == 2 and out == "" and "bad.yaml" in err
    assert not (tmp_path / "out").exists()

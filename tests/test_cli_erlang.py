"""Tests of ``netdim erlang`` (the command line over netdim.erlang)."""

from __future__ import annotations

import json

import pytest

from netdim.cli import main
from netdim.erlang import erlang_b


def run(capsys, *argv):
    code = main(["erlang", *argv])
    out, err = capsys.readouterr()
    return code, out, err


def test_blocking_json(capsys):
    # common practice, no source: 100 E on 100 circuits blocked about 7.6%
    code, out, err = run(capsys, "--traffic", "100", "--servers", "100", "--json")
    assert code == 0 and err == ""
    data = json.loads(out)
    assert set(data) == {"traffic", "servers", "blocking"}
    assert data["blocking"] == pytest.approx(0.076, abs=0.0005)


def test_servers_from_target(capsys):
    # from memory of published Erlang B tables: 12.03 E at 1% needs 20 circuits
    code, out, _ = run(capsys, "--traffic", "12.03", "--target", "0.01", "--json")
    data = json.loads(out)
    assert code == 0 and data["servers"] == 20 and data["target"] == 0.01
    assert data["blocking"] <= 0.01


def test_traffic_from_target_text(capsys):
    # from memory of published Erlang B tables: 100 circuits carry 84.06 E at 1%
    code, out, _ = run(capsys, "--servers", "100", "--target", "0.01")
    assert code == 0
    assert "84.06" in out and "target" in out.splitlines()[0]


def test_rate_and_holding(capsys):
    # source: traffic = rate x holding (definition of the erlang); E(3, 5) by erlang_b
    code, out, _ = run(capsys, "--rate", "60", "--holding", "0.05", "--servers", "5", "--json")
    data = json.loads(out)
    assert code == 0 and data["traffic"] == pytest.approx(3.0)
    assert data["blocking"] == pytest.approx(erlang_b(3.0, 5), rel=1e-12)


def test_range_table_and_json(capsys):
    # source: erlang_b (each row), range ends included
    code, out, _ = run(capsys, "--servers", "10:60:5", "--traffic", "30")
    lines = out.strip().splitlines()
    assert code == 0 and len(lines) == 2 + 11
    assert lines[2].split()[:2] == ["30", "10"]
    code, out, _ = run(capsys, "--traffic", "1:20:1", "--target", "0.05", "--json")
    rows = json.loads(out)
    assert len(rows) == 20 and all(r["blocking"] <= 0.05 for r in rows)
    assert all(r["servers"] == 0 or erlang_b(r["traffic"], r["servers"] - 1) > 0.05
               for r in rows)


@pytest.mark.parametrize(
    "argv,message",
    [
        (["--traffic", "5"], r"give exactly two of"),
        (["--traffic", "5", "--servers", "3", "--target", "0.1"], r"give exactly two of"),
        (["--traffic", "-1", "--servers", "4"], r"--traffic: must be >= 0, got -1\.0"),
        (["--traffic", "abc", "--servers", "4"], r"--traffic: expected a number or"),
        (["--traffic", "3", "--target", "1.5"], r"--target: must be in \(0, 1\), got 1\.5"),
        (["--servers", "1:5:0", "--traffic", "3"], r"--servers: range step must be > 0"),
        (["--servers", "5:1:1", "--traffic", "3"], r"--servers: range stop 1\.0 is below"),
        (["--servers", "1:2", "--traffic", "3"], r"--servers: a range is START:STOP:STEP"),
        (["--rate", "10", "--servers", "3"], r"--rate: needs --holding"),
        (["--rate", "10", "--holding", "0", "--servers", "3"], r"--holding: must be > 0"),
        (["--traffic", "1", "--rate", "10", "--holding", "1", "--servers", "3"],
         r"--traffic and --rate"),
        (["--traffic", "1:3:1", "--servers", "1:3:1"], r"only one of the options may be a range"),
        (["--servers", "-2", "--target", "0.01"], r"--servers: must be >= 0, got -2\.0"),
        (["--traffic", "0:1e9:1", "--servers", "3"], r"at most 10000 allowed"),
        (["--traffic", "nan", "--servers", "3"], r"--traffic: values must be finite"),
    ],
)
def test_bad_input_one_line_exit_2(capsys, argv, message):
    # source: issue 2 (bad input: one clear line on stderr, exit status 2)
    code, out, err = run(capsys, *argv)
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1
    import re

    assert re.search(message, err), err

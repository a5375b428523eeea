"""Tests of ``netdim erlang`` (the command line over netdim.erlang)."""

from __future__ import annotations

import json
import re
import subprocess
import sys

import pytest
from erlang_mpmath import mp_erlang

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
    assert code == 0 and len(lines) == 2 + 11 + 1  # header, rule, rows, legend
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
        # issue 19: a range whose count is not even a finite number
        (["--traffic", "0:1e308:1e-308", "--servers", "10"],
         r"--traffic: range has too many values, at most 10000 allowed \(range too long\)"),
        (["--servers", "0:1e300:1", "--traffic", "10"],
         r"--servers: range has about 1e300 values, at most 10000 allowed"),
        (["--servers", "0:20000:1", "--traffic", "10"],
         r"--servers: range has 20,001 values, at most 10000 allowed"),
        # issue 19: rate x holding overflowing, and values past the formulas' range
        (["--rate", "1e308", "--holding", "10", "--servers", "10", "--json"],
         r"--rate: 1e308 calls per hour held 10\.0 hours is inf erlangs; at most 1e10"),
        (["--rate", "1e9", "--holding", "100", "--target", "0.01"],
         r"--rate: .* is 100000000000\.0 erlangs; at most 1e10 allowed"),
        (["--traffic", "1e12", "--target", "1e-300"], r"--traffic: must be at most 9\.9e9"),
        (["--traffic", "9.95e9", "--target", "0.01"], r"--traffic: must be at most 9\.9e9"),
        (["--servers", "2e10", "--target", "0.01"], r"--servers: must be at most 1e10"),
        (["--traffic", "1e300", "--servers", "3"], r"--traffic: must be at most 1e10"),
    ],
)
def test_bad_input_one_line_exit_2(capsys, argv, message):
    # source: issue 2 (bad input: one clear line on stderr, exit status 2)
    code, out, err = run(capsys, *argv)
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1
    assert re.search(message, err), err


def test_no_traffic_needs_no_servers_and_loses_nothing(capsys):
    # source: issue 19 (no traffic needs no servers, blocking 0; the convention of --help)
    code, out, err = run(capsys, "--traffic", "0", "--target", "0.01", "--json")
    assert code == 0 and err == ""
    assert json.loads(out) == {"traffic": 0.0, "servers": 0, "blocking": 0.0, "target": 0.01}
    code, out, _ = run(capsys, "--traffic", "0", "--servers", "0")
    assert code == 0 and [float(x) for x in out.splitlines()[2].split()] == [0, 0, 0]
    code, out, _ = run(capsys, "--traffic", "0:2:1", "--target", "0.01", "--json")
    rows = json.loads(out)
    assert rows[0]["servers"] == 0 and rows[0]["blocking"] == 0.0
    # the other rows by the definition (smallest n with E <= target)
    for r in rows[1:]:
        n = r["servers"]
        assert erlang_b(r["traffic"], n) <= 0.01 < erlang_b(r["traffic"], n - 1)


def test_help_states_the_conventions(capsys):
    # source: issue 19 and issue 12 (the conventions are stated, not silent)
    with pytest.raises(SystemExit):
        main(["erlang", "--help"])
    text = " ".join(capsys.readouterr().out.split())
    assert "No traffic needs no servers and loses nothing" in text
    assert "continuous extension" in text


def test_real_servers_say_they_use_the_continuous_extension(capsys):
    # source: issue 12 (--servers 2.5 is not accepted silently); the value itself from
    # mpmath, E(3, 2.5) = 3^2.5 e^-3 / Gamma(3.5, 3) (tests/erlang_mpmath.py)
    code, out, err = run(capsys, "--servers", "2.5", "--traffic", "3", "--json")
    assert code == 0
    assert json.loads(out)["blocking"] == pytest.approx(float(mp_erlang(3.0, 2.5)), rel=1e-13)
    assert re.fullmatch(r"netdim: note: --servers 2\.5 is not a whole number: the blocking is "
                        r"that of the continuous extension E\(A, n\) = A\^n e\^-A / "
                        r"Gamma\(n \+ 1, A\)\n", err), err
    code, _, err = run(capsys, "--servers", "2:3:0.5", "--traffic", "3")
    assert "--servers 2.5 is not a whole number" in err
    code, _, err = run(capsys, "--servers", "2:4:1", "--traffic", "3")
    assert err == ""


def test_json_never_holds_nan_or_infinity(capsys):
    # source: issue 19 (JSON never holds NaN or Infinity); the largest values accepted
    for argv in (["--traffic", "1e10", "--servers", "1e10", "--json"],
                 ["--servers", "1e10", "--target", "0.5", "--json"],
                 ["--traffic", "1e-300", "--servers", "30", "--json"]):
        code, out, _ = run(capsys, *argv)
        assert code == 0
        assert not re.search(r"NaN|Infinity", out)
        json.loads(out)


def test_the_command_loads_neither_scipy_nor_the_compiler():
    # source: issue 17 (the command line imports only what the command needs): a fresh
    # interpreter answers one question with no scipy, numba, networkx, yaml or pulp loaded
    code = (
        "import sys\n"
        "from netdim.cli import main\n"
        "main(['erlang', '--traffic', '10', '--target', '0.01'])\n"
        "main(['erlang', '--servers', '100.5', '--target', '0.01'])\n"
        "heavy = {'scipy', 'numba', 'networkx', 'yaml', 'pulp', 'highspy'}\n"
        "print(sorted(m for m in sys.modules if m.split('.')[0] in heavy))\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True)
    assert proc.stdout.strip().splitlines()[-1] == "[]", proc.stdout

"""The Examples of the study functions run as doctests; each states its source inline
(Erlang B values for one trunk group, checked against mpmath in the study tests)."""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = ["netdim.studies.failures", "netdim.studies.growth", "netdim.studies.compare",
           "netdim.studies.headroom", "netdim.studies.diversity"]


@pytest.mark.parametrize("name", MODULES)
def test_examples_run(name):
    result = doctest.testmod(importlib.import_module(name))
    assert result.failed == 0 and result.attempted > 0


def test_lazy_names_load_and_unknown_ones_are_refused():
    import netdim
    import netdim.studies as studies

    assert netdim.failure_study is studies.failure_study
    with pytest.raises(AttributeError, match=r"module 'netdim.studies' has no attribute 'x'"):
        _ = studies.x


def test_csv_and_frame_columns_agree(tmp_path):
    import pathlib

    from netdim.netfile import read_network
    from netdim.studies import failure_study
    from netdim.studies.tables import failures_csv, write_csv

    net = read_network(pathlib.Path(__file__).resolve().parent.parent / "networks"
                       / "three-villages.yaml")
    study = failure_study(net)
    header, rows = failures_csv(study)
    path = write_csv(str(tmp_path), "failures.csv", header, rows)
    lines = pathlib.Path(path).read_text().splitlines()
    assert lines[0].split(",") == header and len(lines) == 1 + len(study.rows)
    # a float written by the csv module reads back to the same double (repr round trip)
    assert float(lines[1].split(",")[6]) == study.rows[0].worst_blocking
    pd = pytest.importorskip("pandas")
    df = study.to_frame()
    assert isinstance(df, pd.DataFrame) and list(df.columns) == header


def test_progress_bar_only_on_a_terminal(monkeypatch, capsys):
    import argparse
    import io

    from netdim.cli._study_options import progress_for

    args = argparse.Namespace(quiet=False)
    assert progress_for(args, "failures") is None  # pytest's stderr is not a terminal
    assert progress_for(argparse.Namespace(quiet=True), "failures") is None

    class Tty(io.StringIO):
        def isatty(self):
            return True

    err = Tty()
    monkeypatch.setattr("sys.stderr", err)
    progress = progress_for(args, "failures")
    progress(0.5, "1/2 failures")
    progress(1.0, "2/2 failures")
    assert "netdim failures" in err.getvalue() and "2/2 failures" in err.getvalue()

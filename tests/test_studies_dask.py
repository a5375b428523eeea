"""Sweeps on a Dask cluster (a LocalCluster of 2 worker processes) give the serial result."""

from __future__ import annotations

import pathlib
import re

import pytest

from netdim.cli import main
from netdim.netfile import read_network
from netdim.studies import _sweep, failure_study, headroom_study

distributed = pytest.importorskip("distributed")

NETWORKS = pathlib.Path(__file__).resolve().parent.parent / "networks"
REGIONAL = NETWORKS / "regional-telephone.yaml"
VILLAGES = NETWORKS / "three-villages.yaml"


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as c:
        yield c


@pytest.mark.slow
def test_failures_on_dask_equal_serial_and_pool(cluster):
    net = read_network(REGIONAL)
    serial = failure_study(net).to_dict()
    with distributed.Client(cluster) as client:
        assert failure_study(net, scheduler=client).to_dict() == serial
    assert failure_study(net, scheduler=cluster.scheduler_address).to_dict() == serial


@pytest.mark.slow
def test_headroom_on_dask_equals_serial(cluster):
    net = read_network(VILLAGES)
    assert headroom_study(net, scheduler=cluster.scheduler_address).to_dict() == \
        headroom_study(net).to_dict()


@pytest.mark.slow
def test_cli_scheduler(cluster, capsys):
    assert main(["failures", str(VILLAGES), "--scheduler", cluster.scheduler_address,
                 "--json"]) == 1
    assert '"count": 3' in capsys.readouterr().out


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_unreachable_scheduler_is_one_line(monkeypatch, capsys):
    monkeypatch.setattr(_sweep, "CONNECT_TIMEOUT", 1)
    status = main(["failures", str(VILLAGES), "--scheduler", "tcp://127.0.0.1:9"])
    assert status == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1
    assert re.search(r"scheduler: cannot reach tcp://127\.0\.0\.1:9", err)


def test_bad_scheduler_value_is_named():
    with pytest.raises(ValueError, match=r"scheduler: expected an address such as"):
        failure_study(read_network(VILLAGES), scheduler="  ")

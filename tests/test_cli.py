"""The command line as a whole: exit statuses and output streams."""

import os
import subprocess
import sys
from pathlib import Path

import pytest

NETWORKS = Path(__file__).resolve().parent.parent / "networks"


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_closed_pipe_is_quiet():
    # Source: common practice, no source (a reader that stops early, such as `head`, closes
    # the pipe; the writer stops without a message, with the shell's status 128 + SIGPIPE).
    with subprocess.Popen(
        [sys.executable, "-m", "netdim", "evaluate", str(NETWORKS / "regional-telephone.yaml")],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE,
    ) as proc:
        proc.stdout.close()  # before netdim has written anything
        err = proc.stderr.read().decode()
        proc.wait(timeout=60)
    assert err == ""
    assert proc.returncode == 141


def test_the_command_line_uses_one_blas_thread_unless_told(tmp_path):
    """The command line sets OPENBLAS_NUM_THREADS=1 before numpy loads, unless the user set
    it: with OpenBLAS's threads the exact method's iterative solve took 60 times the
    processor time on a busy 2-core machine (docs/measurements/evaluate.md)."""
    code = "import os, netdim.cli, numpy; print(os.environ['OPENBLAS_NUM_THREADS'])"
    env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_NUM_THREADS"}
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True,
                         text=True, check=True).stdout
    assert out.strip() == "1"
    env["OPENBLAS_NUM_THREADS"] = "2"
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True,
                         text=True, check=True).stdout
    assert out.strip() == "2"

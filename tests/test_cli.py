"""The command line as a whole: exit statuses and output streams."""

import subprocess
import sys
from pathlib import Path

NETWORKS = Path(__file__).resolve().parent.parent / "networks"


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

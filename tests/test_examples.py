"""Every script in examples/ runs and prints what its .out file says.

The expected outputs were produced by the scripts themselves with fixed seeds; this test guards
the public API the examples use against silent change (a regression check, not a source of
truth for the figures, which the other tests check against outside references).
"""

import pathlib
import subprocess
import sys

import pytest

EXAMPLES = pathlib.Path(__file__).resolve().parent.parent / "examples"
SCRIPTS = sorted(EXAMPLES.glob("*.py"))


def test_examples_exist():
    assert SCRIPTS, "examples/ has no scripts"
    for script in SCRIPTS:
        assert script.with_suffix(".out").exists(), f"{script.name} has no expected output"


@pytest.mark.slow
@pytest.mark.parametrize("script", SCRIPTS, ids=[s.name for s in SCRIPTS])
def test_example_output(script):
    out = subprocess.run(
        [sys.executable, str(script)], capture_output=True, text=True, cwd=EXAMPLES.parent,
        timeout=300,
    )
    assert out.returncode == 0, out.stderr
    assert out.stdout == script.with_suffix(".out").read_text()

"""Fuzz test: mutated network files through every command end no worse than a clean error.

Property (issue 19, the contract in README "Network files"): for any file made from a bundled
network by one mutation of tests/fuzz/mutations.py (deleted keys, wrong types, huge, negative,
NaN and infinite numbers, deep nesting, alias and merge bombs, odd encodings, duplicates),
``netdim check``, ``evaluate`` (each method, small limits) and ``size`` (small budgets), run
through ``netdim.cli.main``, exit 0, 1, 2 or 3; raise nothing; name the file (or the item) on
exit 2; and print valid JSON with no NaN or Infinity on exit 0, 1 or 3. Hypothesis draws the
cases (derandomized, so CI runs the same ones); tests/fuzz/run_fuzz.py runs hundreds more.
"""

from __future__ import annotations

import pathlib
import sys
import tempfile

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

HERE = pathlib.Path(__file__).resolve().parent
sys.path.insert(0, str(HERE / "fuzz"))

from mutations import BASES, MUTATIONS, mutated  # noqa: E402
from run_fuzz import COMMANDS, judge, run_in_process  # noqa: E402

# Cases outside file reading that the fuzz run found failing, left out here until their
# owners fix them (listed in the report with the smallest files):
# - size with a huge module on a link: no answer in 20 s (sizing: modules beyond what the
#   MILP can hold should be refused up front);
# - the other commands on big_file (60k demands): slow evaluation/sizing, not a reading
#   problem (check reads them in well under a second per 20k demands).
KNOWN = {
    ("size", "huge_module"),
}
SLOW_MUTATIONS = {"big_file"}  # check only (reading is what is tested on them)


def _cases():
    out = []
    for base in BASES:
        for mutation in MUTATIONS:
            for command in COMMANDS:
                if (command, mutation) in KNOWN:
                    continue
                if mutation in SLOW_MUTATIONS and command != "check":
                    continue
                out.append((base, mutation, command))
    return out


CASES = _cases()


@pytest.mark.slow
@settings(max_examples=45, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(case=st.sampled_from(CASES), seed=st.integers(0, 2**31))
def test_mutated_files_end_cleanly(case, seed):
    base, mutation, command = case
    with tempfile.TemporaryDirectory() as tmp:
        path = pathlib.Path(tmp) / f"{base}.{mutation}.yaml"
        path.write_bytes(mutated(base, mutation, seed))
        argv = [a.replace("{f}", str(path)) for a in COMMANDS[command]]
        status, out, err, forced = run_in_process(argv, 30)
        assert forced is None, f"{forced} on {argv}: {err[-800:]}"
        assert status in (0, 1, 2, 3), (status, err)
        outcome = judge(path, status, out, err)
        assert outcome in ("clean error", "normal answer"), (outcome, err[-800:])
        if status == 2 and command == "check":
            assert err.startswith(str(path)), err

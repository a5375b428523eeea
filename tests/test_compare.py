"""Tests of the accuracy check (fixed point vs simulation vs exact)."""

import json

import pytest

from netdim.report.text import CAUTION

pytest.importorskip("netdim.evaluate.fixed_point")
from netdim.evaluate.compare import compare_methods
from netdim.report.comparison import comparison_text


@pytest.mark.slow
def test_fixed_point_error_is_flagged_on_two_link_route(erlang_b_ref, tandem):
    # source: exact E(5, 10) = 0.0184 (Erlang B recursion) against the fixed point's ~0.033
    # (Kelly 1991); the simulation interval (99.9%, seed fixed) must hold the exact value
    # and exclude the fixed point
    c = compare_methods(tandem(10, 5.0),
                        simulation={"seed": 2, "calls": 300_000, "confidence": 0.999})
    assert c.exact[0] == pytest.approx(erlang_b_ref(5.0, 10), rel=1e-10)
    assert c.interval[0, 0] <= c.exact[0] <= c.interval[0, 1]
    assert c.outside[0] and c.flagged == ("AC",)
    text = comparison_text(c)
    assert "fixed point outside" in text and text.endswith(CAUTION)
    d = json.loads(json.dumps(c.to_dict()))
    assert d["demands"][0]["outside"] is True and d["exact_available"] is True


def test_no_exact_column_when_too_large(tandem):
    # source: the exact method's state limit (documented option)
    c = compare_methods(tandem(10, 5.0), simulation={"seed": 2, "calls": 20_000},
                        max_states=3)
    assert c.exact is None and "more than the limit 3" in c.exact_message
    assert "No exact figures" in comparison_text(c)

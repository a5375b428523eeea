"""Evaluation over the day through the evaluate registry and `netdim evaluate` (issue 20).

References computed here, independently of netdim:

* the M(t)/M/c/c chain by :func:`scipy.integrate.solve_ivp` on its Kolmogorov forward
  equations, with one more state gathering P(full) (W. Feller, An Introduction to
  Probability Theory and its Applications, vol. 1, 3rd ed., 1968, ch. XVII; from memory);
* Erlang B with mpmath (A. K. Erlang 1917; ``tests/erlang_mpmath.py``) for constant rates;
* the infinite-server mean ``m(t) = int_0^t lambda(s) exp(-(t - s) / h) ds`` by
  :func:`scipy.integrate.quad` (D. L. Jagerman, Bell System Technical Journal 54 (1975)
  625-661; Massey and Whitt 1994; from memory) for the simulated occupancy;
* the issue's worked example (78 spaces at 1 % in the worst period, 4.6 % worst-period
  blocking at 70 spaces), itself computed by the exact chain, checked to the digits given.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy.integrate import quad, solve_ivp

from netdim.cli import main
from netdim.evaluate import METHODS, evaluate
from netdim.netfile import loads_network
from tests.erlang_mpmath import mp_erlang

WAVE = [5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0]


def park(capacity=70, rates=WAVE, extra="", defaults=""):
    text = (
        "name: park\nsites: [GATE, PARK]\n"
        f"links:\n  - {{id: P, ends: [GATE, PARK], capacity: {capacity}}}\n"
        "demands:\n  - id: cars\n    between: [GATE, PARK]\n"
        f"    rates: {list(rates)}\n    holding: 2\n{extra}"
    )
    if defaults:
        text += f"defaults: {defaults}\n"
    return text


def forward_day(rates, c, h, start=0):
    """(blocking per period, lost fraction) of M(t)/M/c/c from the forward equations."""
    p = np.zeros(c + 1)
    p[start] = 1.0
    k = np.arange(c + 1)
    blocking = []
    for lam in rates:
        def f(_t, y, lam=lam):
            q = y[:-1]
            dq = -(lam * (k < c) + k / h) * q
            dq[1:] += lam * q[:-1]
            dq[:-1] += (k[1:] / h) * q[1:]
            return np.append(dq, q[c])
        sol = solve_ivp(f, (0.0, 1.0), np.append(p, 0.0), method="DOP853", rtol=1e-12,
                        atol=1e-15)
        p = sol.y[:-1, -1]
        blocking.append(sol.y[-1, -1])
    b = np.array(blocking)
    lam = np.asarray(rates, float)
    return b, float((lam * b).sum() / lam.sum())


def test_day_is_the_default_and_exact_on_one_park():
    net = loads_network(park())
    ev = evaluate(net)
    assert ev.method == "day-exact" and str(ev.status) == "exact"
    b, lost = forward_day(WAVE, 70, 2.0)
    assert ev.day.blocking[0] == pytest.approx(b, abs=1e-9)
    assert ev.day.lost_fraction[0] == pytest.approx(lost, rel=1e-9)
    assert ev.blocking[0] == pytest.approx(b.max(), rel=1e-9)
    # the issue: about 4.6 % in the worst period (the sixth hour) at 70 spaces
    assert round(float(ev.blocking[0]), 3) == 0.046 and int(ev.day.peak_period[0]) == 5
    assert ev.verdicts().tolist() == ["missed"]


def test_target_basis_day_and_start():
    net = loads_network(park(extra="    target_basis: day\n    start: 10\n    target: 0.02\n"))
    ev = evaluate(net, method="day-exact")
    b, lost = forward_day(WAVE, 70, 2.0, start=10)
    assert ev.blocking[0] == pytest.approx(lost, rel=1e-9)  # the lost share is judged
    assert ev.verdicts().tolist() == ["met"]


def test_constant_rates_cyclic_is_erlang_b():
    net = loads_network(park(capacity=100, rates=[45] * 24, defaults="{cyclic: true}"))
    ev = evaluate(net)
    e = float(mp_erlang(90.0, 100))
    assert ev.day.peak_blocking[0] == pytest.approx(e, rel=1e-8)
    assert ev.day.lost_fraction[0] == pytest.approx(e, rel=1e-8)


@pytest.mark.parametrize("capacity", [70, 76])
def test_network_method_within_15_percent(capacity):
    # the goal: the network method within 15 % of the exact chain on one park
    net = loads_network(park(capacity))
    b, lost = forward_day(WAVE, capacity, 2.0)
    ev = evaluate(net, method="day-fpa")
    assert ev.day.peak_blocking[0] == pytest.approx(b.max(), rel=0.15)
    assert ev.day.lost_fraction[0] == pytest.approx(lost, rel=0.15)
    assert any("approximation" in w for w in ev.warnings)


def test_json_keys_and_plain_networks_unchanged():
    ev = evaluate(loads_network(park()))
    d = ev.to_dict()
    rec = d["demands"][0]
    for key in ("peak_blocking", "peak_period", "lost_fraction", "blocking_by_period"):
        assert key in rec
    assert len(rec["blocking_by_period"]) == 12
    assert {"mean", "quantile", "peak"} <= set(d["links"][0]["occupancy"])
    assert d["day"]["period_hours"] == [1.0] * 12
    json.dumps(d)
    plain = loads_network(park().replace(f"rates: {WAVE}", "rate: 45"))
    assert plain.day is None
    pd = evaluate(plain).to_dict()
    assert evaluate(plain).method == "fixed-point"
    assert "day" not in pd and "peak_blocking" not in pd["demands"][0]


def test_day_method_needs_a_profile():
    plain = loads_network(park().replace(f"rates: {WAVE}", "rate: 45"))
    with pytest.raises(ValueError, match=r"^method: the day methods need demand over the day"):
        evaluate(plain, method="day")


def test_exact_day_refuses_a_network():
    text = park().replace("links:\n", "links:\n  - {id: Q, ends: [GATE, PARK], capacity: 5}\n")
    with pytest.raises(ValueError, match=r"^exact day: the network has 2 links"):
        evaluate(loads_network(text), method="day-exact")


def test_registry_lists_day_methods():
    assert {"day", "day-exact", "day-fpa", "day-mol", "day-simulate"} <= set(METHODS)


def test_unknown_option_of_a_day_method():
    with pytest.raises(ValueError, match=r"^seed: not an option of method 'day-exact'"):
        evaluate(loads_network(park()), method="day-exact", seed=1)


# -- simulation ---------------------------------------------------------------------------

@pytest.mark.slow
def test_simulation_interval_contains_the_exact_day():
    net = loads_network(park())
    # three intervals checked at once: 99 % each keeps the family's error below 3 %
    # (Bonferroni). Periods with few losses (3, 6 here) are left out: with most days
    # losing nothing the day ratios are skewed and the t-interval under-covers (see
    # docs/daily.md)
    ev = evaluate(net, method="day-simulate", seed=11, days=1500, confidence=0.99)
    b, lost = forward_day(WAVE, 70, 2.0)
    sim = ev.day
    lo, hi = sim.lost_fraction_interval[0]
    assert lo <= lost <= hi
    for p in (4, 5):
        lo, hi = sim.blocking_interval[0, p]
        assert lo <= b[p] <= hi, p
    assert str(ev.status) == "simulated" and ev.blocking_interval is not None


@pytest.mark.slow
def test_simulated_occupancy_follows_the_infinite_server_mean():
    # capacity far above the load: no loss, the mean occupancy is m(t)
    net = loads_network(park(capacity=400))
    ev = evaluate(net, method="day-simulate", seed=5, days=400)
    sim = ev.day
    rate = np.asarray(WAVE, float)

    def m(t):
        total = 0.0
        for p in range(12):
            a, b = p, min(p + 1.0, t)
            if b > a:
                total += quad(lambda s, p=p: rate[p] * np.exp(-(t - s) / 2.0), a, b)[0]
        return total

    for g in (4, 12, 20, 28, 40):
        t = float(sim.times[g])
        ref = m(t)
        # Poisson number in system: sd sqrt(m) per day, over 400 days, 5 sd
        assert abs(sim.occupancy_mean[0, g] - ref) <= 5 * np.sqrt(ref / 400) + 1e-9, t
    assert sim.lost_fraction[0] == 0.0


def test_simulation_bad_counts():
    net = loads_network(park())
    with pytest.raises(ValueError, match=r"^days: must be a whole number >= 1, got 0"):
        evaluate(net, method="day-simulate", days=0)


# -- command line -------------------------------------------------------------------------

def write(tmp_path, text):
    path = tmp_path / "park.yaml"
    path.write_text(text)
    return str(path)


def test_cli_evaluate_day(tmp_path, capsys):
    path = write(tmp_path, park(78))
    assert main(["evaluate", path]) == 0
    out = capsys.readouterr().out
    assert "method: day-exact" in out and "worst period" in out and "lost share" in out
    assert "special days" in out
    assert main(["evaluate", path, "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["demands"][0]["peak_period"] == 5


def test_cli_day_check(tmp_path, capsys):
    path = write(tmp_path, park())
    assert main(["evaluate", path, "--check", "--seed", "3", "--days", "300", "--quiet",
                 "--json"]) == 1
    d = json.loads(capsys.readouterr().out)
    rec = d["demands"][0]
    assert d["verdict_method"] == "day-exact" and rec["verdict"] == "missed"
    b, _ = forward_day(WAVE, 70, 2.0)
    assert rec["day-exact"] == pytest.approx(b.max(), rel=1e-9)
    assert {"day-fpa", "day-mol", "day-simulate", "interval", "day-fpa_inside"} <= set(rec)
    assert main(["evaluate", path, "--check", "--seed", "3", "--days", "50", "--quiet"]) == 1
    out = capsys.readouterr().out
    assert "Accuracy check over the day" in out and "outside the simulation's interval" in out
    assert main(["evaluate", path, "--check", "--tol", "1e-9"]) == 2
    assert "--tol: does not apply to --check on a day profile" in capsys.readouterr().err


def test_cli_refusals(tmp_path, capsys):
    path = write(tmp_path, park())
    assert main(["evaluate", path, "--days", "5"]) == 2
    assert "--days: applies to --method day-simulate only" in capsys.readouterr().err
    bad = write(tmp_path, park(rates=[5, -1]))
    assert main(["evaluate", bad]) == 2
    assert "demand 'cars': rates[2] must be >= 0, got -1" in capsys.readouterr().err


TWO_LINKS = """\
name: pair
sites: [A, B]
routing: {policy: alternate, reservation: RES}
links:
  - {id: L1, ends: [A, B], capacity: 2}
  - {id: L2, ends: [A, B], capacity: 2}
demands:
  - {id: D, between: [A, B], rates: [2.0, 2.0, 2.0, 2.0, 2.0, 2.0], holding: 1,
     routes: [[L1], [L2]]}
defaults: {cyclic: true}
"""


def stationary_pair(lam, mu, cap, res):
    """Blocking of one demand over L1 then L2 (overflow admitted while L2 has more than
    ``res`` free): the stationary law of the 2-d chain, solved here with numpy."""
    states = [(i, j) for i in range(cap + 1) for j in range(cap + 1)]
    pos = {s: n for n, s in enumerate(states)}
    q = np.zeros((len(states), len(states)))
    for (i, j), n in pos.items():
        if i < cap:
            q[n, pos[(i + 1, j)]] += lam
        elif j < cap - res:
            q[n, pos[(i, j + 1)]] += lam
        if i:
            q[n, pos[(i - 1, j)]] += i * mu
        if j:
            q[n, pos[(i, j - 1)]] += j * mu
        q[n, n] = -q[n].sum()
    a = np.vstack([q.T, np.ones(len(states))])
    b = np.zeros(len(states) + 1)
    b[-1] = 1.0
    pi = np.linalg.lstsq(a, b, rcond=None)[0]
    return sum(pi[pos[(cap, j)]] for j in range(cap - res, cap + 1))


@pytest.mark.slow
@pytest.mark.parametrize("res", [0, 1])
def test_simulated_alternate_routing_cyclic(res):
    # a cyclic day at a constant rate is the stationary chain; with no reservation the pair
    # is one group of 4 circuits, Erlang B(2 E, 4) = 0.0952 (mpmath); with reservation 1 the
    # 2-d chain above
    net = loads_network(TWO_LINKS.replace("RES", str(res)))
    ref = stationary_pair(2.0, 1.0, 2, res)
    if res == 0:
        assert ref == pytest.approx(float(mp_erlang(2.0, 4)), rel=1e-9)
    ev = evaluate(net, method="day-simulate", seed=2, days=3000)
    lo, hi = ev.day.lost_fraction_interval[0]
    assert lo <= ref <= hi
    assert ev.day.days == 3000

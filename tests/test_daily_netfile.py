"""Network files with demand over the day (issue 20): rates, period, start, cyclic, target_basis.

Checks of bookkeeping against the format's definition (issue 20's "What to build"), and of
the traffic a profiled demand carries for the busy-hour methods: the peak of the mean of an
infinite-server system, ``m' = lambda(t) - m / h`` (D. L. Jagerman, Bell System Technical
Journal 54 (1975) 625-661; from memory), computed here by quadrature with
``scipy.integrate.solve_ivp``, independent of netdim's closed form.
"""

import pathlib

import numpy as np
import pytest
import yaml
from scipy.integrate import solve_ivp

from netdim.errors import NetworkFileError
from netdim.netfile import dumps_network, loads_network, read_network, write_plan

PARK = """\
name: park
sites: [GATE, PARK]
links:
  - {id: P, ends: [GATE, PARK], capacity: 70}
demands:
  - id: cars
    between: [GATE, PARK]
    rates: [5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0]
    holding: 2
"""
ISSUE_RATES = [5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0]


def test_plain_file_has_no_day():
    net = loads_network(PARK.replace("rates: [5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0]",
                                     "rate: 45"))
    assert net.day is None
    assert net.demands[0].traffic == 90.0


def test_rates_read_and_peak_offered_load():
    net = loads_network(PARK, source="park.yaml")
    day = net.day
    assert day.rates == (tuple(float(x) for x in ISSUE_RATES),)
    assert day.period == 1.0 and not day.cyclic and day.start == (0,)
    assert day.target_basis == ("peak",)

    # independent: integrate m' = lambda(t) - m/h hour by hour, dense output, take the max
    def f(t, m):
        return [ISSUE_RATES[min(int(t), 11)] - m[0] / 2.0]

    peak = 0.0
    m0 = [0.0]
    for p in range(12):
        sol = solve_ivp(f, (p, p + 1), m0, rtol=1e-11, atol=1e-12, dense_output=True,
                        max_step=0.01)
        peak = max(peak, float(np.max(sol.sol(np.linspace(p, p + 1, 401)))))
        m0 = [sol.y[0, -1]]
    # the reader takes the peak on a grid of 8 points per period: within 1e-3 relative
    assert net.demands[0].traffic == pytest.approx(peak, rel=1e-3)
    assert net.demands[0].traffic < 45 * 2  # below busy-hour rate x holding


def test_defaults_and_constant_demand_in_profiled_network():
    text = PARK.replace("holding: 2\n", "holding: 2\n    target_basis: day\n") + (
        "  - id: staff\n    between: [GATE, PARK]\n    rate: 3\n    holding: 8\n"
        "defaults: {period: 0.5, cyclic: true}\n")
    net = loads_network(text)
    assert net.day.period == 0.5 and net.day.cyclic
    assert net.day.rates[1] == (3.0,) * 12
    assert net.day.target_basis == ("day", "peak")
    assert net.demands[1].traffic == 24.0  # a constant demand keeps rate x holding


def test_start_read():
    net = loads_network(PARK.replace("holding: 2\n", "holding: 2\n    start: 12\n"))
    assert net.day.start == (12,)


# (text, line, item, problem regex)
BAD = {
    "rates_and_rate": (PARK.replace("holding: 2\n", "holding: 2\n    rate: 4\n"),
                       8, "demand 'cars'", r"give rates .* or rate, not both"),
    "rates_not_list": (PARK.replace("[5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0]", "45"),
                       8, "demand 'cars'", r"rates must be a list, got int 45"),
    "rates_empty": (PARK.replace("[5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0]", "[]"),
                    8, "demand 'cars'", r"rates is empty"),
    "rate_negative": (PARK.replace("[5, 10, 30,", "[5, -10, 30,"),
                      8, "demand 'cars'", r"rates\[2\] must be >= 0, got -10"),
    "rate_text": (PARK.replace("[5, 10, 30,", "[5, many, 30,"),
                  8, "demand 'cars'", r"rates\[2\] must be a number, got 'many'"),
    "rate_inf": (PARK.replace("[5, 10, 30,", "[5, .inf, 30,"),
                 8, "demand 'cars'", r"rates\[2\] must be a finite number"),
    "rates_no_holding": (PARK.replace("    holding: 2\n", ""),
                         8, "demand 'cars'", r"rates needs holding"),
    "period_zero": (PARK.replace("holding: 2\n", "holding: 2\n    period: 0\n"),
                    10, "demand 'cars'", r"period must be > 0, got 0"),
    "period_huge": (PARK + "defaults: {period: 1e6}\n",
                    10, "defaults", r"period '1e6' is too large .*hours"),
    "start_fraction": (PARK.replace("holding: 2\n", "holding: 2\n    start: 2.5\n"),
                       10, "demand 'cars'", r"start must be a whole number, got 2.5"),
    "start_negative": (PARK.replace("holding: 2\n", "holding: 2\n    start: -1\n"),
                       10, "demand 'cars'", r"start must be >= 0, got -1"),
    "cyclic_text": (PARK + "defaults: {cyclic: yes}\n",
                    10, "defaults", r"cyclic must be true or false, got 'yes'"),
    "basis_unknown": (PARK.replace("holding: 2\n", "holding: 2\n    target_basis: peek\n"),
                      10, "demand 'cars'",
                      r"unknown target_basis 'peek' \(did you mean 'peak'\?\)"),
    "start_with_cyclic": (PARK.replace("holding: 2\n", "holding: 2\n    start: 3\n")
                          + "defaults: {cyclic: true}\n",
                          10, "demand 'cars'", r"start: a cyclic day has no start occupancy"),
    "period_without_rates": (PARK.replace("rates: [5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0]",
                                          "rate: 45").replace("holding: 2\n",
                                                              "holding: 2\n    period: 1\n"),
                             10, "demand 'cars'", r"period applies to rates"),
    "basis_without_rates": (PARK.replace("rates: [5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0]",
                                         "rate: 45") + "defaults: {target_basis: day}\n",
                            10, "defaults", r"target_basis applies to a day profile"),
    "periods_differ": (PARK + "  - id: vans\n    between: [GATE, PARK]\n"
                       "    rates: [1, 2]\n    holding: 1\n",
                       12, "demand 'vans'",
                       r"rates: 2 periods, but demand 'cars' \(line 6\) has 12"),
    "clock_differs": (PARK.replace("holding: 2\n", "holding: 2\n    period: 0.5\n")
                      + "  - id: vans\n    between: [GATE, PARK]\n"
                      "    rates: [1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12]\n    holding: 1\n",
                      11, "demand 'vans'", r"period 1 h differs from 0.5 h of demand 'cars'"),
    "cyclic_disagrees": (PARK.replace("holding: 2\n", "holding: 2\n    cyclic: false\n")
                         + "defaults: {cyclic: true}\n",
                         10, "demand 'cars'", r"cyclic false disagrees with defaults.cyclic"),
    "multirate": (PARK.replace("holding: 2\n", "holding: 2\n    bandwidth: 2\n"),
                  8, "demand 'cars'", r"rates: bandwidth 2: a day profile takes single-rate"),
    "start_over_capacity": (PARK.replace("holding: 2\n", "holding: 2\n    start: 71\n"),
                            10, "demand 'cars'",
                            r"start: 71 calls in progress on link 'P' exceed its capacity 70"),
    "too_much_traffic": (PARK.replace("[5, 10, 30,", "[5, 1e9, 30,"),
                         8, "demand 'cars'", r"rates: largest rate x holding = 2e\+09 erlangs"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_day_fields(case):
    text, line, item, problem = BAD[case]
    with pytest.raises(NetworkFileError, match=rf"^f\.yaml:{line}: {item}: {problem}"):
        loads_network(text, source="f.yaml")


def test_write_network_keeps_the_day():
    text = PARK.replace("holding: 2\n", "holding: 2\n    target_basis: day\n    start: 4\n")
    net = loads_network(text + "defaults: {period: 0.5}\n")
    again = loads_network(dumps_network(net))
    assert again.day == net.day
    assert again.demands[0].traffic == pytest.approx(net.demands[0].traffic)


def test_plan_file_keeps_day_fields(tmp_path):
    src = tmp_path / "park.yaml"
    src.write_text(PARK + "defaults: {cyclic: true, target_basis: peak}\n")
    net = loads_network(src.read_text(), source=str(src))
    out = tmp_path / "plan.yaml"
    write_plan(net, out, [78])
    data = yaml.safe_load(out.read_text())
    assert data["links"][0]["capacity"] == 78
    assert data["demands"][0]["rates"] == ISSUE_RATES
    assert data["defaults"] == {"cyclic": True, "target_basis": "peak"}
    assert loads_network(out.read_text()).day == net.day


def test_scaled_network_scales_the_day():
    net = loads_network(PARK).scaled(2.0)
    assert net.day.rates[0][3] == 90.0  # 45/h doubled
    assert net.demands[0].traffic == pytest.approx(2 * loads_network(PARK).demands[0].traffic)


def test_bundled_campus_day_reads():
    path = pathlib.Path(__file__).resolve().parent.parent / "examples" / "campus_day.yaml"
    net = read_network(path)
    assert net.day.n_periods == 14 and not net.day.cyclic
    assert net.day.rate_array().shape == (4, 14)

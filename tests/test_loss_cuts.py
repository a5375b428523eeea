"""Cutting planes below a link's loss rates (netdim.dimension.loss_cuts).

The offsets are checked against a brute-force minimum over a fine grid of loads and every
allowed capacity, with Erlang B computed by its recursion (the ``erlang_b_ref`` fixture of
tests/conftest.py; Jagerman 1974) and the reservation chain built here state by state from
its birth and death rates (common practice, no source). The convexity of the Erlang loss
rate in the load, which the offsets of the Erlang cuts rely on, is checked numerically.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from netdim.dimension import loss_cuts as lc
from netdim.dimension.loss_cuts import (
    erlang_cut_offsets,
    reservation_cut_offsets,
    reservation_table,
)


def test_plane_slopes_checked():
    with pytest.raises(ValueError, match="slopes"):
        erlang_cut_offsets([0.1], [0.2], [5.0], [0], [1], [10], [0])
    with pytest.raises(ValueError, match="slopes"):
        reservation_cut_offsets((1, 0), [-0.1], [-0.2], [3.0], [1], [5.0], [0], [1], [10])
    with pytest.raises(ValueError, match=r"weights: need two numbers >= 0, not both 0"):
        reservation_cut_offsets((0, 0), [0.1], [-0.2], [3.0], [1], [5.0], [0], [1], [10])
    with pytest.raises(ValueError, match=r"weights: need two numbers \(first-choice, overflow\)"):
        reservation_cut_offsets(3, [0.1], [-0.2], [3.0], [1], [5.0], [0], [1], [10])


def reservation_losses(first, over, c, r):
    """Loss rates (first, overflow) of the birth-death chain, built here state by state."""
    w = [1.0]
    for k in range(c):
        lam = first + over if k < c - r else first
        w.append(w[-1] * lam / (k + 1))
    tot = sum(w)
    b1 = w[c] / tot
    b2 = sum(w[max(c - r, 0):]) / tot
    return first * b1, over * b2


def test_plane_offsets_below_brute_force_minimum(erlang_b_ref):
    # alpha + beta nu + gamma c <= phi_c(nu) on a fine grid of loads and every capacity up
    # to 60 (beyond, phi >= 0 >= the plane, see the offset rule), and close to the minimum.
    rng = np.random.default_rng(7)
    beta = rng.uniform(0.0, 0.6, 4)
    gamma = -rng.uniform(0.01, 0.1, 4)
    vmax = rng.uniform(3.0, 25.0, 4)
    inst, mod, kmax, shift = np.array([0, 2, 0, 1]), np.array([1, 1, 2, 1]), \
        np.array([60, 50, 30, 59]), np.array([0, 2, 1, 0])
    alpha = erlang_cut_offsets(beta, gamma, vmax, inst, mod, kmax, shift)
    first = rng.uniform(1.0, 12.0, 4)
    alpha_res = reservation_cut_offsets((1.0, 1.0), beta, gamma, first, shift, vmax, inst,
                                        mod, kmax)
    for p in range(4):
        nus = np.linspace(0.0, vmax[p], 201)
        best = best_res = math.inf
        for k in range(kmax[p] + 1):
            c = int(inst[p] + mod[p] * k)
            s = max(c - int(shift[p]), 0)
            for nu in nus:
                lam = nu * erlang_b_ref(nu, s)
                best = min(best, lam - beta[p] * nu - gamma[p] * c)
                l1, l2 = reservation_losses(first[p], nu, c, int(shift[p]))
                best_res = min(best_res, l1 + l2 - beta[p] * nu - gamma[p] * c)
        assert alpha[p] <= best + 1e-12
        assert alpha[p] >= best - 0.02
        assert alpha_res[p] <= best_res + 1e-12
        assert alpha_res[p] >= best_res - 0.05


def test_weighted_reservation_planes_below_brute_force_minimum():
    # alpha + beta o + gamma c <= w1 F B1 + w2 o B2 (the chain built here state by state)
    rng = np.random.default_rng(11)
    w = (1.0, 4.0)
    beta = rng.uniform(0.0, 2.0, 3)
    gamma = -rng.uniform(0.05, 0.5, 3)
    vmax = rng.uniform(5.0, 30.0, 3)
    first = rng.uniform(2.0, 15.0, 3)
    res, inst, mod, kmax = np.array([2, 1, 3]), np.array([0, 0, 4]), np.array([1, 1, 2]), \
        np.array([50, 45, 25])
    alpha = reservation_cut_offsets(w, beta, gamma, first, res, vmax, inst, mod, kmax)
    for p in range(3):
        best = math.inf
        for k in range(kmax[p] + 1):
            c = int(inst[p] + mod[p] * k)
            for o in np.linspace(0.0, vmax[p], 121):
                l1, l2 = reservation_losses(first[p], o, c, int(res[p]))
                best = min(best, w[0] * l1 + w[1] * l2 - beta[p] * o - gamma[p] * c)
        assert alpha[p] <= best + 1e-12
        assert alpha[p] >= best - 0.2


def test_reservation_table_equals_the_chain():
    # every capacity and overflow load at once, against the chain built state by state
    first, r = 7.5, 2
    o = np.linspace(0.0, 20.0, 9)
    cs = np.arange(0, 31)
    fl, ov = reservation_table(first, r, o, cs)
    for i, c in enumerate(cs):
        for k, x in enumerate(o):
            l1, l2 = reservation_losses(first, x, int(c), r)
            assert fl[i, k] == pytest.approx(l1, rel=1e-12, abs=1e-300)
            assert ov[i, k] == pytest.approx(l2, rel=1e-12, abs=1e-300)


@pytest.mark.parametrize("s", [1, 2, 5, 12, 30])
def test_erlang_loss_rate_convex_in_load(erlang_b_ref, s):
    # Step (6) of the proof, checked numerically: second differences of nu E(nu, s) >= 0.
    nus = np.linspace(0.05, 3.0 * s + 5, 600)
    lam = np.array([nu * erlang_b_ref(nu, s) for nu in nus])
    assert np.all(np.diff(lam, 2) >= -1e-12)


def test_erlang_loss_rate_not_jointly_convex(erlang_b_ref):
    # Why the offsets are computed: along nu = s the loss rate is concave (the midpoint of
    # two points lies above the chord), so tangent planes in (nu, s) are not valid cuts.
    lam = [s * erlang_b_ref(float(s), s) for s in (10, 20, 30)]
    assert lam[1] > (lam[0] + lam[2]) / 2


@pytest.mark.parametrize("installed, module, max_modules", [(8, 10**7, 0), (30, 10**6, 1),
                                                            (0, 30, 3)])
def test_hull_grid_holds_only_allowed_capacities(monkeypatch, installed, module, max_modules):
    """The grid of the hull faces tabulates Erlang B only up to the link's largest allowed
    capacity ``installed + module * max_modules`` (issue 19: a module of 1e7 on a link with no
    room for one tabulated 1e7 rows and ran for minutes)."""
    seen = []
    real = lc.erlang_b_table

    def spy(traffic, max_servers, *, servers=None):
        seen.append(int(max_servers))
        return real(traffic, max_servers, servers=servers)

    monkeypatch.setattr(lc, "erlang_b_table", spy)
    lc.erlang_hull_faces(5.0, installed, module, max_modules)
    assert seen and max(seen) <= installed + module * max_modules

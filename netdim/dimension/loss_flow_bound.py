"""A lower bound on the least cost of a plan under alternate routing: the loss-flow relaxation.

:func:`loss_flow_bound` solves a linear relaxation of the reduced-load fixed-point equations:
every route's carried and lost traffic, every link's offered, carried and lost traffic per
stream (first choice, overflow), with the link's loss rate kept above functions of its load
and capacity that any solution of the equations satisfies (Erlang loss rate, reservation
chain, Messerli secants), by cutting planes whose offsets are computed so that they hold at
every allowed integer capacity (:mod:`netdim.dimension.loss_cuts`). The proof is in
``docs/theory/loss-flow-bound.md``.
"""

from __future__ import annotations

import time

import numpy as np

from netdim.dimension._lp import SolveStatus, solve
from netdim.dimension.choices import SizingChoices
from netdim.dimension.loss_cuts import (
    SAFETY,
    erlang_cut_offsets,
    erlang_hull_faces,
    loss_rate,
    reservation_cut_offsets,
    reservation_hull_faces,
    reservation_losses,
)
from netdim.dimension.options import silent
from netdim.dimension.plan import Bound
from netdim.erlang import erlang_b

__all__ = ["loss_flow_bound", "LossFlowData", "LossFlowRelaxation", "applies",
           "RESERVATION_CUT_LINKS", "MILP_NODES", "MILP_LINKS", "LP_WORK"]

#: Largest network (links) on which the reservation-chain cuts are on by default.
RESERVATION_CUT_LINKS = 500
#: Branch-and-bound nodes each MILP round may take (a deterministic work limit).
MILP_NODES = 500
#: MILP rounds run on networks of at most this many links: beyond, the MILP's root LP alone
#: takes minutes (20-site mesh of the benchmark: 190 links) and integrality adds little.
MILP_LINKS = 100
#: Work limit of the LP rounds, in link-rounds (links x rounds): a round's cut separation,
#: which dominates its time, costs about one grid search per link.
LP_WORK = 10_000
#: Relative amount taken off every solver value (its feasibility / optimality tolerances).
_LP_SLACK = 1e-6
#: MILP rounds go on while each raises the bound by at least this (relative).
_MILP_GAIN = 1e-3
#: A stage of LP rounds ends when a round raises the bound by less than this (relative).
_ROUND_GAIN = 1e-5
#: Overflow weights w of the cuts on first-choice loss + w x overflow loss (second stage).
_WEIGHTS = (0.1, 0.25, 0.5, 2.0, 4.0, 10.0)
#: A cut is added where the relaxation's point violates the loss function by more than this.
_TOL = 1e-6


# -- the relaxation ---------------------------------------------------------------------------
class LossFlowData:
    """Routes, loads and link facts the relaxation needs (demands with traffic only)."""

    def __init__(self, network, choices: SizingChoices):
        nl = choices.n_links
        self.nl = nl
        self.res = np.asarray(network.reservations(), np.int64)
        self.demands = []  # (A, t, [(rank, links, factors, family)])
        vt = np.zeros(nl)
        vf = np.zeros(nl)
        vo = np.zeros(nl)
        first_const = np.ones(nl, bool)  # first-choice load fixed (one-link first routes only)
        fconst = np.zeros(nl)
        # Links the sizer may leave unbuilt, taking the routes over them away (see
        # docs/theory/loss-flow-bound.md): a route all of whose earlier routes cross such a link may
        # become the first choice, so its stream is not known.
        droppable = choices.droppable
        for d in network.demands:
            if not d.traffic > 0:
                continue
            routes = []
            may_lead = True  # every earlier route crosses a droppable link
            for rank, r in enumerate(d.routes):
                f = [h / d.holding for h in r.holdings]
                fam = "F" if rank == 0 else ("T" if may_lead else "O")
                may_lead = may_lead and bool(droppable[list(r.links)].any())
                routes.append((rank, tuple(r.links), tuple(f), fam))
                for j, fj in zip(r.links, f, strict=True):
                    vt[j] += d.traffic * fj
                    if fam == "T":
                        continue
                    if rank == 0:
                        vf[j] += d.traffic * fj
                        if r.hops == 1:
                            fconst[j] += d.traffic * fj
                        else:
                            first_const[j] = False
                    else:
                        vo[j] += d.traffic * fj
            self.demands.append((float(d.traffic), float(d.target), routes))
        self.vmax = {"T": vt, "F": vf, "O": vo}
        self.first_const = first_const & (vf > 0)
        self.fconst = fconst
        self.choices = choices


class LossFlowRelaxation:
    """The loss-flow LP / MILP: variables, fixed constraints and the cuts added so far.

    ``reservation_cuts``: also cut with the reservation chain's loss rates (and, once the
    plain cuts are exhausted, weighted sums of the two streams' losses); ``hull_slopes``:
    take cut slopes from the lower convex hull of each loss function, not only from its
    load derivative.
    """

    def __init__(self, data: LossFlowData, reservation_cuts=True, hull_slopes=True):
        import pulp  # about 0.25 s to import: only sizing needs it

        self.data = data
        self.use_res = bool(reservation_cuts)
        self.envelope = bool(hull_slopes)
        sp = data.choices
        nl = data.nl
        prob = pulp.LpProblem("loss_flow", pulp.LpMinimize)
        self.k = [prob.add_variable(f"k{j}", lowBound=0, upBound=float(sp.max_modules[j]))
                  for j in range(nl)]
        # per link and family: (nu terms, loss terms)
        self.nu = {x: [[] for _ in range(nl)] for x in "TFO"}
        self.ls = {x: [[] for _ in range(nl)] for x in "TFO"}
        carried = [[] for _ in range(nl)]
        n_z = n_l = 0
        for i, (a, t, routes) in enumerate(data.demands):
            zs = []
            for rank, links, fac, fam in routes:
                z = prob.add_variable(f"z{i}_{rank}", lowBound=0)
                n_z += 1
                zs.append(z)
                # a route of unknown stream ("T") counts in the link totals only
                fams = ("T",) if fam == "T" else (fam, "T")
                if len(links) == 1:
                    j, f = links[0], fac[0]
                    # one-link route: its link loses exactly what the route loses
                    loss = pulp.LpAffineExpression([(zz, -f) for zz in zs], constant=a * f)
                    for x in fams:
                        self.ls[x][j].append(loss)
                        self.nu[x][j].append(loss)
                        self.nu[x][j].append(pulp.LpAffineExpression([(z, f)]))
                    carried[j].append((z, f))
                    continue
                terms = []
                for step, (j, f) in enumerate(zip(links, fac, strict=True)):
                    lv = prob.add_variable(f"l{i}_{rank}_{step}", lowBound=0)
                    n_l += 1
                    terms.append((lv, 1.0 / f))
                    for x in fams:
                        self.ls[x][j].append(pulp.LpAffineExpression([(lv, 1.0)]))
                        self.nu[x][j].append(pulp.LpAffineExpression([(lv, 1.0), (z, f)]))
                    carried[j].append((z, f))
                # the link losses of a route are at most its loss
                prob += pulp.LpAffineExpression(terms + [(zz, 1.0) for zz in zs]) <= a
            if zs:
                prob += pulp.lpSum(zs) >= a * (1.0 - t)
                prob += pulp.lpSum(zs) <= a
            elif a * (1.0 - t) > 0:
                self.hopeless = True
        # one variable per link and family for its load and its loss, so that cuts stay short
        for store, tag in ((self.nu, "nu"), (self.ls, "ls")):
            for x in "TFO":
                out = []
                for j, terms in enumerate(store[x]):
                    if not terms:
                        out.append(pulp.LpAffineExpression())
                        continue
                    var = prob.add_variable(f"{tag}{x}{j}", lowBound=0)
                    prob += pulp.LpAffineExpression([(var, 1.0)]) == pulp.lpSum(terms)
                    out.append(pulp.LpAffineExpression([(var, 1.0)]))
                store[x] = out
        self.cap = [pulp.LpAffineExpression([(self.k[j], float(sp.module[j]))],
                                            constant=float(sp.installed[j]))
                    for j in range(nl)]
        for j in range(nl):
            if carried[j]:
                prob += pulp.LpAffineExpression(carried[j]) <= self.cap[j]
        prob += pulp.lpSum(float(sp.cost_per_module[j]) * self.k[j] for j in range(nl))
        self.prob = prob
        self.n_cuts = 0
        self.n_secants = 0
        self._grids = {}  # hull faces per (family, link)
        self._first_secants()

    hopeless = False
    weights = ()
    milp_raised = 0  # the last MILP round that raised the bound

    def _first_secants(self):
        """Links whose first-choice load is a constant F: loss >= F E(F, c), by its secants.

        The secant tables are kept; a few secants (where the blocking crosses 50 %, 20 %,
        10 %, ... 0.1 %) go in at once, the others when the relaxation's point violates them.
        """
        d, sp = self.data, self.data.choices
        self.secants = {}
        for j in np.flatnonzero(d.first_const):
            f = float(d.fconst[j])
            inst, mod = int(sp.installed[j]), int(sp.module[j])
            top = min(int(sp.max_modules[j]), max(1, int(np.ceil((f + 12 * np.sqrt(f) + 40 - inst)
                                                         / mod))))
            ks = np.arange(0, top + 1)
            e = np.asarray(erlang_b(f, (inst + mod * ks).astype(float)), float)
            g = f * e
            live = int(np.searchsorted(-g, -1e-12 * f)) if len(g) > 1 else 0
            self.secants[int(j)] = (ks, g, np.zeros(len(ks), bool), max(live, 1))
            for level in (0.5, 0.2, 0.1, 0.05, 0.02, 0.01, 0.005, 0.002, 0.001):
                i = int(np.searchsorted(-e, -level))
                self._add_secant(int(j), min(max(i - 1, 0), len(ks) - 2))

    def _add_secant(self, j, i):
        ks, g, on, live = self.secants[j]
        if i < 0 or i >= len(ks) - 1 or on[i] or i >= live:
            return False
        slope = g[i + 1] - g[i]
        self.prob += (self.ls["F"][j] - slope * self.k[j]
                      >= float(g[i] - slope * ks[i]) - SAFETY * float(g[0] + 1.0))
        on[i] = True
        self.n_secants += 1
        return True

    def _separate_secants(self, caps, pts):
        sp = self.data.choices
        added = 0
        lf = pts["F"][1]
        for j, (ks, g, _on, _live) in self.secants.items():
            kf = (caps[j] - sp.installed[j]) / sp.module[j]
            i = int(np.clip(np.floor(kf + 1e-9), 0, len(ks) - 2))
            val = g[i] + (g[i + 1] - g[i]) * (kf - ks[i])
            if lf[j] < val - _TOL * (1.0 + val):
                added += self._add_secant(j, i)
        return added

    def solve(self, integer, mip_gap, time_limit, solver, node_limit=None):
        """Solve the LP (or, ``integer``, the MILP); returns ``(LpOutcome, lower bound)``,
        the bound kept clear of the solver's tolerances."""
        import pulp  # about 0.25 s to import: only sizing needs it

        for v in self.k:
            v.cat = pulp.LpInteger if integer else pulp.LpContinuous
        # the interior-point method (with crossover) is several times faster on the LPs
        out = solve(self.prob, solver, integer=integer, mip_gap=mip_gap, time_limit=time_limit,
                    node_limit=node_limit if integer else None, interior_point=not integer)
        bound = out.bound
        if np.isfinite(bound):
            # solver tolerances (1e-7 on feasibility and optimality): keep clear of them
            bound -= _LP_SLACK * (1.0 + abs(bound))
        return out, bound

    def point(self):
        """Per family: (nu, loss) at the last solution, and the capacities."""
        import pulp  # about 0.25 s to import: only sizing needs it

        caps = np.array([pulp.value(c) for c in self.cap], float)
        out = {}
        for x in "TFO":
            nu = np.array([pulp.value(e) or 0.0 for e in self.nu[x]], float)
            ls = np.array([pulp.value(e) or 0.0 for e in self.ls[x]], float)
            out[x] = (nu, ls)
        return caps, out

    def separate(self):
        """Add the violated cuts at the last LP point; returns how many were added."""
        d = self.data
        caps, pts = self.point()
        zero = np.zeros(d.nl, np.int64)
        # (family, loss expressions, load expressions, load bound, links, shift or loss values)
        # A family is ("erlang", stream) for the Erlang loss rate of one stream (T: total),
        # or ("reservation", (w_first, w_overflow)) for a weighted sum of the reservation
        # chain's two loss rates where the first-choice load is a constant.
        fams = []
        for x in "TFO":
            cand = d.vmax[x] > 0
            if x == "F":
                cand &= ~d.first_const
            shift = d.res if x == "O" else zero
            fams.append((("erlang", x), self.ls[x], self.nu[x], d.vmax[x],
                         np.flatnonzero(cand), shift))
        fc = np.flatnonzero(d.first_const & (d.vmax["O"] > 0))
        if len(fc) and self.use_res:
            sums = [self.ls["F"][j] + self.ls["O"][j] for j in range(d.nl)]
            lsum = pts["F"][1] + pts["O"][1]
            for w, lexpr, lval in (((1.0, 0.0), self.ls["F"], pts["F"][1]),
                                   ((0.0, 1.0), self.ls["O"], pts["O"][1]),
                                   ((1.0, 1.0), sums, lsum)):
                fams.append((("reservation", w), lexpr, self.nu["O"], d.vmax["O"], fc, lval))
            for w in self.weights:
                lexpr = [self.ls["F"][j] + w * self.ls["O"][j] for j in range(d.nl)]
                fams.append((("reservation", (1.0, w)), lexpr, self.nu["O"], d.vmax["O"], fc,
                             pts["F"][1] + w * pts["O"][1]))
        added = self._separate_secants(caps, pts)
        for fam in fams:
            added += self._separate_family(caps, pts, *fam)
        self.n_cuts += added
        return added

    def _envelope_slopes(self, family, links, v, c, shift):
        """Slopes of the plane highest at (v, c) among the faces of the lower convex hull of
        the loss function on a grid (cached per link); the offset is then computed exactly."""
        beta = np.zeros(len(links))
        gamma = np.zeros(len(links))
        for i, j in enumerate(links):
            faces = self._faces(family, j, shift)
            if faces is None:
                continue
            al, be, ga = faces
            best = int(np.argmax(al + be * v[i] + ga * c[i]))
            beta[i], gamma[i] = be[best], ga[best]
        return beta, gamma

    def _faces(self, family, j, shift):
        """Faces of the lower convex hull of link j's loss function of ``family`` on a grid
        (:mod:`netdim.dimension.loss_cuts`), cached."""
        key = (family, int(j))
        if key not in self._grids:
            d, sp = self.data, self.data.choices
            what, arg = family
            geometry = (int(sp.installed[j]), int(sp.module[j]), int(sp.max_modules[j]))
            if what == "reservation":
                self._grids[key] = reservation_hull_faces(
                    arg, float(d.vmax["O"][j]), *geometry, first=float(d.fconst[j]),
                    reservation=int(d.res[j]))
            else:
                self._grids[key] = erlang_hull_faces(float(d.vmax[arg][j]), *geometry,
                                                     shift=int(shift[j]))
        return self._grids[key]

    def _separate_family(self, caps, pts, family, lexpr, nexpr, vmax_all, idx, extra):
        d, sp = self.data, self.data.choices
        if not len(idx):
            return 0
        what, arg = family
        reservation = what == "reservation"
        if reservation:
            nu = pts["O"][0]
            ls = extra
            w1, w2 = arg
        else:
            nu, ls = pts[arg]
            shift = extra
        inst, mod = sp.installed[idx], sp.module[idx]
        kf = (caps[idx] - inst) / mod
        k0 = np.clip(np.floor(kf + 1e-9), 0, sp.max_modules[idx]).astype(np.int64)
        k1 = np.minimum(k0 + 1, sp.max_modules[idx])
        th = np.clip(kf - k0, 0.0, 1.0)
        c0, c1 = inst + mod * k0, inst + mod * k1
        vmax = vmax_all[idx]
        v = np.clip(nu[idx], 0.0, vmax)
        if reservation:
            first, r = d.fconst[idx], d.res[idx]

            def g(o, c):
                a, b = reservation_losses(first, r, np.maximum(o, 0.0), c)
                return w1 * a + w2 * b

            h = np.maximum(1e-4 * vmax, 1e-6)
            l0, l1 = g(v, c0), g(v, c1)
            d0 = (g(v + h, c0) - g(np.maximum(v - h, 0.0), c0)) / (v + h - np.maximum(v - h, 0.0))
            d1 = (g(v + h, c1) - g(np.maximum(v - h, 0.0), c1)) / (v + h - np.maximum(v - h, 0.0))
        else:
            sh = shift[idx]
            l0, d0 = loss_rate(v, np.maximum(c0 - sh, 0))
            l1, d1 = loss_rate(v, np.maximum(c1 - sh, 0))
        val = (1 - th) * l0 + th * l1
        lv = ls[idx]
        viol = np.flatnonzero(lv < val - _TOL * (1.0 + val))
        if not len(viol):
            return 0
        # a plane with the slope in the load between the neighbouring capacities, and one
        # from the hull of the loss function
        gam = np.where(k1 > k0, np.minimum(0.0, (l1 - l0) / mod), 0.0)[viol]
        slopes = [np.maximum((1 - th) * d0 + th * d1, 0.0)[viol]]
        gams = [gam]
        if self.envelope:
            eb, eg = self._envelope_slopes(family, idx[viol], v[viol], caps[idx[viol]],
                                           None if reservation else extra)
            slopes.append(eb)
            gams.append(eg)
        beta = np.concatenate(slopes)
        gamma = np.concatenate(gams)
        links = np.tile(idx[viol], len(slopes))
        viol = np.tile(viol, len(slopes))
        geometry = (sp.installed[links], sp.module[links], sp.max_modules[links])
        if reservation:
            alpha = reservation_cut_offsets(arg, beta, gamma, d.fconst[links], d.res[links],
                                            d.vmax["O"][links], *geometry)
        else:
            alpha = erlang_cut_offsets(beta, gamma, vmax_all[links], *geometry, shift[links])
        added = 0
        for p, j in enumerate(links):
            a, b, gm = float(alpha[p]), float(beta[p]), float(gamma[p])
            if a + b * v[viol[p]] + gm * caps[j] <= lv[viol[p]] + _TOL * (1.0 + lv[viol[p]]):
                continue
            # loss >= alpha + beta nu + gamma (installed + module k)
            self.prob += (lexpr[j] - b * nexpr[j] - gm * float(sp.module[j]) * self.k[j]
                          >= a + gm * float(sp.installed[j]))
            added += 1
        return added


def applies(network) -> bool:
    """The loss-flow bound is proven for alternate routing with one-unit calls."""
    return network.routing.policy == "alternate" and not network.is_multirate


def loss_flow_bound(network, choices: SizingChoices | None = None, *, solver="highs",
                    mip_gap=1e-4, max_rounds=30, integer=False, node_limit=MILP_NODES,
                    work_limit=LP_WORK, reservation_cuts=None, hull_slopes=True,
                    time_limit=None, progress=None) -> Bound | None:
    """Lower bound on the least cost of a plan under alternate routing (fixed-point model).

    Valid for every integer plan for which some solution of the reduced-load fixed-point
    equations meets every target, and so for the conservative model too: the plan's cost
    (added modules times their price, plus any fixed costs) is at least the value. The
    value is the optimum of a linear relaxation tightened by cutting planes [1]_ [2]_; see
    ``docs/theory/loss-flow-bound.md`` for the proof. Fixed costs are left out of it.

    Parameters
    ----------
    network : Network
        Alternate routing, single-rate (every bandwidth 1); see :func:`applies`.
    choices : SizingChoices, optional
        The plan's choices; default ``SizingChoices.from_network(network)``.
    solver : {'highs', 'cbc'}
        LP / MILP solver (HiGHS: its interior-point method for the LPs).
    mip_gap : float
        Relative gap of the MILP rounds (``integer=True`` only).
    max_rounds : int
        Most rounds of cuts (one LP solve each), and most MILP rounds.
    integer : bool
        End with rounds of the MILP (integer modules), each cut at its integer point and
        solved again while cuts are violated there and the bound rises by 0.1 %; on
        networks of at most :data:`MILP_LINKS` links.
    node_limit : int
        Branch-and-bound nodes of each MILP round.
    work_limit : int
        No LP round starts once the rounds so far times the network's links reach this
        (a deterministic stand-in for time); the first round always runs.
    reservation_cuts : bool or None
        Also cut with the reservation chain's loss rates on links whose first-choice load
        is a constant. None: on networks of at most :data:`RESERVATION_CUT_LINKS` links.
    hull_slopes : bool
        Take cut slopes from the lower convex hull of the loss functions too.
    time_limit : float or None
        Safety stop, seconds from the call (building the model counts): no round starts
        after it (then ``stopped_by_time``).
    progress : callable(fraction, message) or None

    Returns
    -------
    Bound or None
        None when the bound does not apply (see :func:`applies`), a demand with traffic has
        no route, or the relaxation is not solved.

    References
    ----------
    .. [1] F. P. Kelly, "Blocking probabilities in large circuit-switched networks",
       Advances in Applied Probability 18 (1986) 473-505.
    .. [2] E. J. Messerli, "Proof of a convexity property of the Erlang B formula", Bell
       System Technical Journal 51 (1972) 951-953.
    """
    if isinstance(max_rounds, bool) or int(max_rounds) != max_rounds or max_rounds < 1:
        raise ValueError(f"max_rounds: must be an integer >= 1, got {max_rounds!r}")
    if not applies(network):
        return None
    if choices is None:
        choices = SizingChoices.from_network(network)
    progress = progress or silent
    if reservation_cuts is None:
        reservation_cuts = len(network.links) <= RESERVATION_CUT_LINKS
    clock = _Clock(time_limit)  # from here: building the model counts against the stop
    rel = LossFlowRelaxation(LossFlowData(network, choices), reservation_cuts=reservation_cuts,
                             hull_slopes=hull_slopes)
    if rel.hopeless:
        return None

    best, rounds = _lp_rounds(rel, solver, int(max_rounds), work_limit, len(network.links),
                              clock, progress)
    kind = f"loss-flow LP ({rounds} rounds, {rel.n_cuts} cuts)"
    milp_rounds = 0
    if integer and len(network.links) <= MILP_LINKS and np.isfinite(best):
        best, milp_rounds = _milp_rounds(rel, solver, mip_gap, node_limit, int(max_rounds),
                                         best, clock, progress)
        if milp_rounds and rel.milp_raised:
            kind = (f"loss-flow MILP ({rounds} LP and {rel.milp_raised} MILP rounds, "
                    f"{rel.n_cuts} cuts)")
    if not np.isfinite(best):
        return None
    return Bound(float(max(best, 0.0)), kind, rounds=rounds + milp_rounds, cuts=rel.n_cuts,
                 seconds=clock.elapsed(), stopped_by_time=clock.stopped)


class _Clock:
    """Seconds since the start, the time left of the safety stop, and whether it fired."""

    def __init__(self, limit):
        self.limit = limit
        self.t0 = time.perf_counter()
        self.stopped = False

    def elapsed(self):
        return time.perf_counter() - self.t0

    def left(self):
        return None if self.limit is None else max(self.limit - self.elapsed(), 1.0)

    def over(self):
        if self.limit is not None and self.elapsed() > self.limit:
            self.stopped = True
        return self.stopped


def _lp_rounds(rel, solver, max_rounds, work_limit, links, clock, progress):
    """Rounds of LP and cuts; returns (best bound, rounds)."""
    best = -np.inf
    rounds = 0
    for it in range(max_rounds):
        if it and rounds * links >= work_limit:
            break
        out, b = rel.solve(False, 0.0, clock.left(), solver)
        rounds += 1
        progress(None, f"round {it}: LP {b:.8g} ({out.status}), {rel.n_cuts} cuts, "
                 f"{rel.n_secants} secants, {clock.elapsed():.1f} s")
        if out.status is not SolveStatus.OPTIMAL or not np.isfinite(b):
            clock.stopped = clock.stopped or out.status is SolveStatus.TIME_LIMIT
            break
        # a stage ends when its cuts are exhausted or no longer raise the bound
        stalled = b - best < _ROUND_GAIN * abs(b)
        best = max(best, b)
        if clock.over():
            break
        if stalled or rel.separate() == 0:
            if rel.weights or not rel.use_res:
                break
            # the plain cuts are done: cut weighted sums of the two streams' losses too
            rel.weights = _WEIGHTS
            if rel.separate() == 0:
                break
    return best, rounds


def _milp_rounds(rel, solver, mip_gap, node_limit, max_rounds, best, clock, progress):
    """Rounds of the MILP (integer modules) cut at its integer point; returns (best bound,
    rounds). Each MILP is held to a node limit: its root bound comes early, and proving
    optimality can take far longer than it adds. Its proven bound counts whatever its
    status."""
    rounds = 0
    rel.milp_raised = 0
    while rounds < max_rounds:
        if clock.limit is not None and clock.elapsed() >= clock.limit:
            clock.stopped = True
            break
        out, b = rel.solve(True, mip_gap, clock.left(), solver, node_limit=node_limit)
        rounds += 1
        clock.stopped = clock.stopped or out.status is SolveStatus.TIME_LIMIT
        progress(None, f"MILP round {rounds}: {b:.8g} ({out.status}), {rel.n_cuts} cuts, "
                 f"{clock.elapsed():.1f} s")
        gain = b - best if np.isfinite(b) else 0.0
        if gain > 0:
            best = b
            rel.milp_raised = rounds
        if gain < _MILP_GAIN * abs(best) or not out.has_solution:
            # integrality adds little here, or there is no integer point to cut at
            break
        if rel.separate() == 0:
            break
    return best, rounds

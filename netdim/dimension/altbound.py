"""A lower bound on the least cost of a plan under alternate routing (loss-flow relaxation).

:func:`alternate_bound` solves a linear relaxation of the fixed-point equations: every
route's carried and lost traffic, every link's offered, carried and lost traffic per stream
(first choice, overflow), with the link's loss rate kept above functions of its load and
capacity that any solution of the equations satisfies (Erlang loss rate, reservation chain,
Messerli secants), by cutting planes whose offsets are computed so that they hold at every
allowed integer capacity (:mod:`netdim.dimension.losscuts`). The proof is in the notes of
:func:`alternate_bound`.
"""

from __future__ import annotations

import time

import numpy as np

from netdim.dimension.losscuts import (
    SAFETY,
    hull_faces,
    loss_planes_offset,
    loss_rate,
    res_planes_offset,
    reservation_losses,
    stream_weights,
)

__all__ = ["alternate_bound"]

#: Largest network (links) on which the reservation-chain cuts are on by default.
RESERVATION_CUT_LINKS = 500
#: Relative amount taken off every solver value (its feasibility / optimality tolerances).
_LP_SLACK = 1e-6
#: MILP rounds go on while each raises the bound by at least this (relative).
_MILP_GAIN = 1e-3
#: Overflow weights w of the cuts on first-choice loss + w x overflow loss (second stage).
_WEIGHTS = (0.1, 0.25, 0.5, 2.0, 4.0, 10.0)
#: A cut is added where the relaxation's point violates the loss function by more than this.
_TOL = 1e-6


def _milp_time(left, time_limit):
    """Seconds for one MILP of the integer rounds: a quarter of the budget, within what is left."""
    if time_limit is None:
        return None
    return max(min(left, 0.25 * time_limit), 1.0)


# -- the relaxation ---------------------------------------------------------------------------
class _Data:
    """Routes, loads and link facts the relaxation needs (demands with traffic only)."""

    def __init__(self, network, space):
        nl = space.n_links
        self.nl = nl
        self.res = np.asarray(network.reservations(), np.int64)
        self.demands = []  # (A, t, [(rank, links, factors, family)])
        vt = np.zeros(nl)
        vf = np.zeros(nl)
        vo = np.zeros(nl)
        first_const = np.ones(nl, bool)  # first-choice load fixed (one-link first routes only)
        fconst = np.zeros(nl)
        # Links the sizer may leave unbuilt, taking the routes over them away (see
        # alternate_bound, Notes): a route all of whose earlier routes cross such a link may
        # become the first choice, so its stream is not known.
        droppable = (np.asarray(space.fixed_cost) > 0) & (np.asarray(space.installed) == 0)
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
        self.space = space



class _Relaxation:
    """The loss-flow LP / MILP: variables, fixed constraints and the cuts added so far."""

    def __init__(self, data):
        import pulp

        self.data = data
        sp = data.space
        nl = data.nl
        prob = pulp.LpProblem("altbound", pulp.LpMinimize)
        self.k = [prob.add_variable(f"k{j}", lowBound=0, upBound=float(sp.kmax[j]))
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
    use_res = True
    weights = ()
    envelope = True
    span = None

    def _first_secants(self):
        """Links whose first-choice load is a constant F: loss >= F E(F, c), by its secants.

        The secant tables are kept; a few secants (where the blocking crosses 50 %, 20 %,
        10 %, ... 0.1 %) go in at once, the others when the relaxation's point violates them.
        """
        from netdim.erlang import erlang_b

        d, sp = self.data, self.data.space
        self.secants = {}
        for j in np.flatnonzero(d.first_const):
            f = float(d.fconst[j])
            inst, mod = int(sp.installed[j]), int(sp.module[j])
            top = min(int(sp.kmax[j]), max(1, int(np.ceil((f + 12 * np.sqrt(f) + 40 - inst)
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
        sp = self.data.space
        added = 0
        lf = pts["F"][1]
        for j, (ks, g, _on, _live) in self.secants.items():
            kf = (caps[j] - sp.installed[j]) / sp.module[j]
            i = int(np.clip(np.floor(kf + 1e-9), 0, len(ks) - 2))
            val = g[i] + (g[i + 1] - g[i]) * (kf - ks[i])
            if lf[j] < val - _TOL * (1.0 + val):
                added += self._add_secant(j, i)
        return added

    def solve(self, integer, mip_gap, time_limit, solver):
        """Solve the LP (or, ``integer``, the MILP); returns (status text, lower bound)."""
        import pulp

        from netdim.dimension.milp import _quiet_highs, make_solver

        for v in self.k:
            v.cat = pulp.LpInteger if integer else pulp.LpContinuous
        engine = None
        if solver == "highs" and not integer:
            try:
                _quiet_highs()
                # the interior-point method (with crossover) is several times faster here
                engine = pulp.HiGHS(msg=False, mip=False, threads=1, timeLimit=time_limit,
                                    solver="ipm")
            except ImportError:
                engine = None
        if engine is None:
            engine = make_solver(solver, mip_gap, time_limit)
        code = self.prob.solve(engine)
        text = pulp.LpStatus.get(code, "Undefined")
        if isinstance(engine, getattr(pulp, "HiGHS", ())) and text == "Optimal":
            # PuLP reads a stop at the time limit with a primal solution as 'Optimal': ask
            # HiGHS itself
            import highspy

            status = self.prob.solverModel.getModelStatus()
            if status != highspy.HighsModelStatus.kOptimal:
                text = "Not Solved"
        obj = pulp.value(self.prob.objective)
        bound = float("nan")
        if integer and solver == "highs":
            try:
                bound = float(self.prob.solverModel.getInfo().mip_dual_bound)
            except Exception:  # noqa: BLE001 - no bound known
                bound = float("nan")
        elif text == "Optimal" and obj is not None:
            bound = float(obj) - (mip_gap * abs(float(obj)) if integer else 0.0)
        if np.isfinite(bound):
            # solver tolerances (1e-7 on feasibility and optimality): keep clear of them
            bound -= _LP_SLACK * (1.0 + abs(bound))
        return text, bound

    def point(self):
        """Per family: (nu, loss) at the last solution, and the capacities."""
        import pulp

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
        # (family, loss expressions, load expressions, load bound, links, evaluator)
        fams = []
        for x in "TFO":
            cand = d.vmax[x] > 0
            if x == "F":
                cand &= ~d.first_const
            shift = d.res if x == "O" else zero
            fams.append((x, self.ls[x], self.nu[x], d.vmax[x], np.flatnonzero(cand), shift))
        fc = np.flatnonzero(d.first_const & (d.vmax["O"] > 0))
        if len(fc) and self.use_res:
            sums = [self.ls["F"][j] + self.ls["O"][j] for j in range(d.nl)]
            lsum = pts["F"][1] + pts["O"][1]
            for kind, lexpr, lval in ((1, self.ls["F"], pts["F"][1]),
                                      (2, self.ls["O"], pts["O"][1]), (3, sums, lsum)):
                fams.append((kind, lexpr, self.nu["O"], d.vmax["O"], fc, lval))
            for w in self.weights:
                lexpr = [self.ls["F"][j] + w * self.ls["O"][j] for j in range(d.nl)]
                fams.append(((1.0, w), lexpr, self.nu["O"], d.vmax["O"], fc,
                             pts["F"][1] + w * pts["O"][1]))
        added = self._separate_secants(caps, pts)
        for fam in fams:
            added += self._separate_family(caps, pts, *fam)
        self.n_cuts += added
        return added

    def _envelope_slopes(self, x, links, v, c, shift):
        """Slopes of the plane highest at (v, c) among the faces of the lower convex hull of
        the loss function on a grid (cached per link); the offset is then computed exactly."""
        beta = np.zeros(len(links))
        gamma = np.zeros(len(links))
        for i, j in enumerate(links):
            faces = self._faces(x, j, shift)
            if faces is None:
                continue
            al, be, ga = faces
            best = int(np.argmax(al + be * v[i] + ga * c[i]))
            beta[i], gamma[i] = be[best], ga[best]
        return beta, gamma

    def _faces(self, x, j, shift):
        """Faces of the lower convex hull of link j's loss function of family ``x`` on a
        grid (:func:`netdim.dimension.losscuts.hull_faces`), cached."""
        key = (x, int(j))
        if key not in self._grids:
            d, sp = self.data, self.data.space
            res_kind = not isinstance(x, str)
            self._grids[key] = hull_faces(
                x if res_kind else "erlang",
                float(d.vmax["O"][j] if res_kind else d.vmax[x][j]),
                int(sp.installed[j]), int(sp.module[j]), int(sp.kmax[j]),
                shift=0 if res_kind else int(shift[j]),
                first=float(d.fconst[j]) if res_kind else 0.0, res=int(d.res[j]))
        return self._grids[key]

    def _separate_family(self, caps, pts, x, lexpr, nexpr, vmax_all, idx, extra):
        d, sp = self.data, self.data.space
        if not len(idx):
            return 0
        res_kind = not isinstance(x, str)
        if res_kind:
            nu = pts["O"][0]
            ls = extra
        else:
            nu, ls = pts[x]
            shift = extra
        inst, mod = sp.installed[idx], sp.module[idx]
        kf = (caps[idx] - inst) / mod
        k0 = np.clip(np.floor(kf + 1e-9), 0, sp.kmax[idx]).astype(np.int64)
        k1 = np.minimum(k0 + 1, sp.kmax[idx])
        th = np.clip(kf - k0, 0.0, 1.0)
        c0, c1 = inst + mod * k0, inst + mod * k1
        vmax = vmax_all[idx]
        v = np.clip(nu[idx], 0.0, vmax)
        if res_kind:
            first, r = d.fconst[idx], d.res[idx]

            def g(o, c):
                a, b = reservation_losses(first, r, np.maximum(o, 0.0), c)
                w1, w2 = stream_weights(x)
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
            eb, eg = self._envelope_slopes(x, idx[viol], v[viol], caps[idx[viol]],
                                           extra if not res_kind else None)
            slopes.append(eb)
            gams.append(eg)
        beta = np.concatenate(slopes)
        gamma = np.concatenate(gams)
        links = np.tile(idx[viol], len(slopes))
        viol = np.tile(viol, len(slopes))
        inst_l, mod_l, kmax_l = sp.installed[links], sp.module[links], sp.kmax[links]
        if res_kind:
            alpha = res_planes_offset(x, beta, gamma, d.fconst[links], d.res[links],
                                      d.vmax["O"][links], inst_l, mod_l, kmax_l)
        else:
            alpha = loss_planes_offset(beta, gamma, vmax_all[links], inst_l, mod_l, kmax_l,
                                       shift[links])
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


def alternate_bound(network, space=None, solver="highs", mip_gap=1e-4, time_limit=None,
                    max_rounds=30, integer=False, reservation_cuts=None, progress=None):
    """Lower bound on the least cost of a plan under alternate routing (fixed-point model).

    Valid for every integer plan for which some solution of the reduced-load fixed-point
    equations (:func:`netdim.evaluate.fixed_point.fixed_point`) meets every target: the
    plan's cost (added modules x cost per module, plus any fixed costs) is at least the
    value returned. The value is the optimum of a linear relaxation ("loss-flow LP")
    tightened by cutting planes; see Notes for the proof.

    Parameters
    ----------
    network : Network
        Alternate routing, single-rate (every bandwidth 1). Otherwise the LP bound
        "capacity >= carried load" of the sizer is returned (see Returns).
    space : LinkSpace, optional
        The plan's choice space; default ``LinkSpace.of(network)``.
    solver : {'highs', 'cbc'}
        LP / MILP solver through PuLP (HiGHS, its interior-point method for the LPs).
    mip_gap : float
        Relative gap of the final MILP (``integer=True`` only).
    time_limit : float or None
        Seconds for the whole computation: no new round of cuts starts after it, and each
        solve is given what is left. The best value proven so far is returned.
    max_rounds : int
        Most rounds of cuts (one LP solve each).
    integer : bool
        End with rounds of the MILP (integer modules): each is solved (given at most a
        quarter of ``time_limit``), cut at its integer point, and solved again while cuts
        are violated there; its proven dual bound is used when larger.
    reservation_cuts : bool or None
        Also cut with the reservation chain's exact loss rates on links whose first-choice
        load is a constant (tighter per round, slower per round). None: on networks of at
        most :data:`RESERVATION_CUT_LINKS` links.
    progress : callable(str) or None
        Called with one line per round.

    Returns
    -------
    value : float
    description : str
        What the value is, e.g. ``'loss-flow LP (14 rounds, 2291 cuts)'``; starting with
        ``'LP: capacity >= carried load'`` when the fallback was used, with the reason.

    Raises
    ------
    ValueError
        Unknown solver, ``mip_gap`` outside [0, 1), ``time_limit`` <= 0 or
        ``max_rounds`` < 1.

    Notes
    -----
    *Fallback.* The proof below is for alternate routing with one-unit calls. Fixed
    routing, multi-rate demands, a demand with traffic and no route (no plan can meet its
    target), and a relaxation the solver fails on, all return the sizer's LP bound
    (:func:`netdim.dimension.sizer._flow_bound`). Fixed costs are left out of the value
    (they only add to a plan's cost, so the value stays a lower bound).

    *The model* (as in :mod:`netdim.evaluate.fixed_point`). Link j of capacity c_j and
    reservation r_j is offered a first-choice load f_j and an overflow load o_j; its
    occupancy is the birth-death chain on 0..c_j with death rate k and birth rate
    ``f_j + o_j`` below ``c_j - r_j``, ``f_j`` from there up to c_j (stream blockings
    ``B^F_j = P(k = c_j)``, ``B^O_j = P(k >= c_j - r_j)``). Route m of a demand (traffic A,
    target t, rank 0 = first choice, stream F; rank >= 1 stream O) is offered x_m, with
    ``x_0 = A``, ``x_{m+1} = x_m L_m``, ``L_m = 1 - prod_{i in m} (1 - B_i)``; the demand is
    lost with probability ``x_M / A``. Route m offers link j the load
    ``h_mj x_m prod_{i in m, i != j} (1 - B_i)`` (h_mj: holding time on j over the
    demand's). Fix any solution of these equations for an integer plan meeting every
    target, and put ``z_m = x_m prod_{i in m} (1 - B_i)`` (carried by route m) and
    ``l_mj = h_mj x_m B_j prod_{i != j} (1 - B_i)`` (lost by route m at link j).

    (1) ``x_{m+1} = x_m - z_m``, so ``sum_{m' <= m} z_m' <= A`` and the target reads
    ``sum_m z_m >= A (1 - t)``.

    (2) ``sum_{j in m} l_mj / h_mj <= x_m - z_m``: the left side is ``x_m`` times the
    probability that exactly one of independent events of probabilities B_i occurs, the
    right side ``x_m`` times the probability that at least one does. Equality for a
    one-link route.

    (3) Per link and stream s, the offered load is ``nu^s_j = sum_m (h_mj z_m + l_mj)``,
    its loss rate ``l^s_j = nu^s_j B^s_j = sum_m l_mj`` and its carried load
    ``y^s_j = sum_m h_mj z_m`` (the sums over the routes of that stream through j);
    ``nu^s_j <= V^s_j = sum_m h_mj A`` since ``x_m <= A``.

    (4) ``y^F_j + y^O_j = f B^F + o B^O`` is the chain's mean occupancy (summing the
    balance equations ``lambda_k p_k = (k + 1) p_{k+1}``), hence at most c_j.

    (5) Monotonicity (common practice; shown here): in a birth-death chain with death
    rate k the stationary weights are ``w_k = prod_{i<k} lambda_i / k!``; raising one
    birth rate lambda_i multiplies every w_k with k > i by the same factor >= 1, which
    raises ``P(k >= a)`` for every a, hence the mean occupancy. So, with
    ``Lambda(nu, s) = nu E(nu, s)`` the loss rate of an Erlang system (E: Erlang B,
    ``E(nu, 0) = 1``):
    (a) total: the chain's birth rates are at most ``nu = f + o``, so its carried load
    is at most ``nu (1 - E(nu, c))`` and ``l^F_j + l^O_j >= Lambda(nu^F_j + nu^O_j, c_j)``;
    (b) first-choice: its rates are at least f, so ``B^F >= E(f, c)`` and
    ``l^F_j >= Lambda(nu^F_j, c_j)``;
    (c) overflow: the weights up to ``c - r`` are those of the Erlang chain at load nu, so
    ``P(k >= c - r) >= w_{c-r} / sum_{k <= c-r} w_k = E(nu, c - r) >= E(o, c - r)`` and
    ``l^O_j >= Lambda(nu^O_j, max(c_j - r_j, 0))`` (B^O = 1 when ``c <= r``);
    (d) when every first route over j is a one-link route, ``f_j = F_j`` is the constant
    sum of their traffic (nothing thins them), so ``l^F_j = F_j B^F(F_j, o, c)`` and
    ``l^O_j = o B^O(F_j, o, c)`` exactly, both nondecreasing in o by the same argument;
    and ``l^F_j >= F_j E(F_j, c_j)``, convex in the integer c (Messerli 1972), hence above
    each of its secants between consecutive module counts at every integer count.

    (6) ``Lambda(., s)`` is convex for every integer s >= 1 (s = 0 is linear). Proof:
    ``1 / Lambda = sum_{k=0}^{s} s! / (k! nu^(s-k+1)) = sum_m c_m nu^(-m)`` (m = s - k + 1,
    c_m > 0), and ``(1/R)'' = (2 R'^2 - R R'') / R^3`` has the sign of
    ``2 (E m)^2 - E[m (m + 1)]`` under the weights ``c_m nu^(-m)``, which are the Erlang
    occupancy law: ``m = X + 1`` with X the number of idle servers, and the sign is that of
    ``2 (E X)^2 - E[X (X - 1)]``. X has ``P(X = x + 1) / P(X = x) = (s - x) / nu``,
    nonincreasing, so its hazard ``P(X = x) / P(X >= x)`` is nondecreasing and its tail
    ``T_x = P(X >= x)`` satisfies ``T_{i+j} <= T_i T_j`` (increasing failure rate implies
    new-better-than-used, Barlow and Proschan 1975). Then
    ``E[X (X - 1)] / 2 = sum_{x >= 1} (x - 1) T_x = sum_{i, j >= 1} T_{i+j}
    <= (sum_{i >= 1} T_i)^2 = (E X)^2``.

    (7) Cuts. Each cut is ``loss >= alpha + beta nu + gamma c`` (beta >= 0, gamma <= 0)
    for one of the loss functions phi of (5), with alpha computed, not assumed: for every
    allowed capacity c (installed + module x k, k up to the bound) the least of
    ``phi_c(nu) - beta nu`` over ``[0, V]`` is bounded below on a grid of cells, by the
    tangents at both ends of a cell for the convex Lambda of (6), by the value at the
    left end minus ``beta`` times the right end for the nondecreasing functions of (5d);
    capacities are scanned upwards until ``-beta V - gamma c`` is no smaller than the
    offset so far, which covers every larger capacity since ``phi >= 0``. A relative
    slack of 1e-9 covers rounding. Any slopes give valid cuts; they are chosen at the last
    LP point (where the cut is placed): the load derivative there, and the face of the lower
    convex hull of the loss function on a grid of loads and capacities that is highest at
    the point (scipy's Qhull; the hull is only a guide, the offset is computed as above).
    When these cuts are exhausted, a second stage cuts ``l^F_j + w l^O_j`` for a few weights
    w > 0: by (5d) ``F_j B^F + w o B^O`` is nondecreasing in o, so the same offset rule
    holds.

    The point (k of the plan, z, l, nu) satisfies (1)-(7), so the LP over those
    constraints (k continuous in [0, kmax]) has optimum at most the plan's cost; the LP
    value, less 1e-6 of it for the solver's tolerances, is returned. With
    ``integer=True`` the MILP's proven dual bound may replace it when larger.

    *Links left unbuilt.* The sizer may leave a link with a fixed cost and nothing
    installed unbuilt, and then takes away every route over it, so that a demand's first
    remaining route becomes its first choice (:func:`netdim.dimension.dimension`, Notes).
    Such a plan is the network's plan with capacity 0 on the unbuilt links, except that a
    route whose earlier routes all crossed them joins the first-choice stream, where no
    reservation holds it back. Every route of rank >= 1 whose earlier routes each cross a
    link that may be left unbuilt is therefore of unknown stream: its traffic counts in the
    link totals of (3), (4) and (5a), which do not depend on the stream, and in neither
    stream's sums. The cuts of (5b)-(5d) stay valid for the remaining sums: the unknown
    routes only add to the chain's birth rates, which raises ``P(k = c)`` and
    ``P(k >= c - r)`` (5), so the loss of the known routes of each stream is still at least
    its bound at their loads (with ``F_j`` the known one-link first-choice traffic in
    (5d)). A route over an unbuilt link carries nothing, as at capacity 0. Before this
    rule the bound could exceed the least cost: 20.9 against 18 on the two-link network of
    ``tests/test_altbound.py``.

    *Checked numerically only* (not part of the proof): the grid bounds against a fine
    brute-force search, and the value against exhaustive search over every plan of tiny
    networks (``tests/test_altbound.py``). Measured on the benchmark meshes of
    ``tests/benchmarks/bench_size.py`` against the sizer's plans: with the load derivative
    alone the gap was 15.8 % (10 sites), 14.7 % (20), 15.2 % (30) and 16.5 % (50) in 20 s;
    the hull's slopes bring it to 10.7 %, 11.4 %, 13.0 % and 15.4 % in 20 s (15.1 % at 50
    sites when allowed 60 s), and the weighted second stage to 8.7 % at 10 sites. At a
    relaxation point the per-link loss rates are then close to the true ones (sum within 10
    %), yet the point's capacities miss most targets in the fixed point: what remains is in
    how the relaxation spreads losses over streams and routes. The MILP rounds add about
    0.01 % at 10 sites, but where modules are large they matter: before the hull's slopes,
    on the bundled regional network (modules of 30) they raised the bound from 1355.9 to
    1710.9 (gap 54.9 % to 43.0 %; with the hull 1940.8, gap 35.4 %), on the campus network
    from 1851.2 to 1890.0 (gap 2.8 % to 0.8 %). The relaxation stays weak where routes are
    free to take losses that belong to other routes of the same link and stream (the equal
    blocking of a stream is bilinear and left out), and where a route loses traffic that
    shows as loss on none of its links (two links blocking at once). ``Lambda`` is *not*
    jointly convex in (nu, s): along ``nu = s`` it grows like ``sqrt(2 s / pi)``, concave,
    so tangent planes of the continuous extension are not valid cuts; hence the computed
    offsets.

    References
    ----------
    E. J. Messerli, "Proof of a convexity property of the Erlang B formula", Bell System
    Technical Journal 51 (1972) 951-953.
    D. L. Jagerman, "Some properties of the Erlang loss function", Bell System Technical
    Journal 53 (1974) 525-551.
    R. E. Barlow and F. Proschan, "Statistical Theory of Reliability and Life Testing",
    Holt, Rinehart and Winston (1975).
    F. P. Kelly, "Blocking probabilities in large circuit-switched networks", Advances in
    Applied Probability 18 (1986) 473-505.
    """
    from netdim.dimension.milp import SOLVERS
    from netdim.dimension.space import LinkSpace

    if solver not in SOLVERS:
        raise ValueError(f"solver: unknown solver {solver!r}; choose one of {', '.join(SOLVERS)}")
    if not (0 <= mip_gap < 1):
        raise ValueError(f"mip_gap: must lie in [0, 1), got {mip_gap!r}")
    if time_limit is not None and not time_limit > 0:
        raise ValueError(f"time_limit: must be > 0 seconds, got {time_limit!r}")
    if isinstance(max_rounds, bool) or int(max_rounds) != max_rounds or max_rounds < 1:
        raise ValueError(f"max_rounds: must be an integer >= 1, got {max_rounds!r}")
    if space is None:
        space = LinkSpace.of(network)
    say = progress or (lambda s: None)
    t0 = time.perf_counter()

    def fallback(why):
        from netdim.dimension.sizer import _flow_bound

        value = _flow_bound(network, space, network.routing.policy == "alternate")
        return float(value), f"LP: capacity >= carried load ({why})"

    if network.routing.policy != "alternate":
        return fallback("routing is not alternate")
    if network.is_multirate:
        return fallback("multi-rate demands")
    data = _Data(network, space)
    rel = _Relaxation(data)
    if reservation_cuts is None:
        reservation_cuts = len(network.links) <= RESERVATION_CUT_LINKS
    rel.use_res = bool(reservation_cuts)
    if rel.hopeless:
        return fallback("a demand with traffic has no route")

    def left():
        if time_limit is None:
            return None
        return max(time_limit - (time.perf_counter() - t0), 1.0)

    best = -np.inf
    rounds = 0
    for it in range(int(max_rounds)):
        text, b = rel.solve(False, 0.0, left(), solver)
        rounds += 1
        say(f"round {it}: LP {b:.8g} ({text}), {rel.n_cuts} cuts, {rel.n_secants} secants, "
            f"{time.perf_counter() - t0:.1f} s")
        if text != "Optimal" or not np.isfinite(b):
            break
        best = max(best, b)
        if time_limit is not None and time.perf_counter() - t0 > time_limit:
            break
        if rel.separate() == 0:
            if rel.weights or not rel.use_res:
                break
            # the plain cuts are done: cut weighted sums of the two streams' losses too
            rel.weights = _WEIGHTS
            if rel.separate() == 0:
                break
    kind = f"loss-flow LP ({rounds} rounds, {rel.n_cuts} cuts)"
    milp_rounds = 0
    while integer and milp_rounds < int(max_rounds) and (
            time_limit is None or time.perf_counter() - t0 < time_limit):
        # Each MILP is given a quarter of the budget at most: its root bound comes early,
        # and proving optimality can take far longer than it adds (measured on the
        # benchmark meshes). Its proven bound counts whatever its status.
        text, b = rel.solve(True, mip_gap, _milp_time(left(), time_limit), solver)
        milp_rounds += 1
        say(f"MILP round {milp_rounds}: {b:.8g} ({text}), {rel.n_cuts} cuts, "
            f"{time.perf_counter() - t0:.1f} s")
        gain = b - best if np.isfinite(b) else 0.0
        if gain > 0:
            best = b
            kind = f"loss-flow MILP ({rounds} LP and {milp_rounds} MILP rounds, {rel.n_cuts} cuts)"
        if gain < _MILP_GAIN * abs(best) or text not in ("Optimal", "Not Solved"):
            # integrality adds little here, or there is no integer point to cut at
            break
        if rel.separate() == 0:
            break
    if not np.isfinite(best):
        return fallback("the relaxation was not solved")
    return float(max(best, 0.0)), kind

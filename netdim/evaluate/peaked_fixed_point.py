"""End-to-end blocking under alternate routing, with the peakedness of the overflow.

The reduced-load fixed point treats every stream offered to a link as Poisson. Overflow is
not: it comes in bursts, when the group it left is full, and meets more blocking than the
time congestion of the links it overflows onto. Here every stream offered to a link carries
its mean and its peakedness (variance over mean):

* a first-choice stream is Poisson, thinned by the blocking of the other links of its route
  (a random thinning of a Poisson stream is Poisson);
* the stream offered to a demand's route ``k >= 1`` is what route ``k - 1`` lost: its mean
  is the demand's traffic times the blocking of every earlier route, as in the plain fixed
  point; it is made of parts of what each link of route ``k - 1`` loses;
* what a link loses in one class (first-choice, or overflow under reservation) is one
  stream, of Riordan's peakedness for the equivalent random group of the link's traffic;
  the parts of it that reach one link, over all demands, are one random part of it, of
  share ``P`` and peakedness ``1 + P (Z - 1)`` (random splitting of the calls on an infinite
  group: the law of total variance), thinned the same way by the route's other links.

Each link then gives each stream its own blocking from the link model of
:func:`netdim.peaked.link_factors` (the overflow as an interrupted Poisson process with three
moments from its equivalent random group, solved exactly with the first-choice traffic and
the trunk reservation; every overflow stream meeting the class's blocking), and the
whole is iterated to a fixed point as the plain reduced-load evaluation is: the same adaptive
damping, the same solves from idle and from full links with a bistability report, the same
ConvergenceError. Without overflow (fixed routing, or demands with one route) every stream
is Poisson and the equations are those of the plain fixed point.

Design notes and the accuracy measured against exact solutions and simulation:
``docs/theory/peaked-overflow.md``, ``docs/measurements/accuracy.md``.
"""

from __future__ import annotations

import weakref
from dataclasses import replace

import numpy as np

from netdim._peaked_kernels import stream_peakedness
from netdim.erlang import erlang_b
from netdim.errors import ConvergenceError
from netdim.evaluate.result import Evaluation
from netdim.model import POLICIES, incidence
from netdim.peaked import EQUIVALENTS, LINK_MODELS, SPLITS, link_factors
from netdim.vocabulary import EvaluationStatus

__all__ = ["peaked_fixed_point", "METHOD", "OPTIONS", "Q_FLOOR", "BISTABLE_GAP", "REFINE_TOL",
           "applies", "multirate_problem",
           "default_method"]

#: The method's name in ``Evaluation.method``.
METHOD = "peaked-fixed-point"
#: Keyword options of :func:`peaked_fixed_point` (the command line checks its flags here).
OPTIONS = ("tol", "max_iter", "start", "link_model", "equivalent", "split")
#: Floor of 1 - b in the iteration, as in the plain fixed point (a link of capacity 0 blocks
#: everything; the own-step exclusion Q_r / q_s never divides by zero).
Q_FLOOR = 1e-130
#: Two solutions closer than this (largest difference in any blocking) count as one.
BISTABLE_GAP = 1e-6
#: Before two solutions are called two, both are solved on to this tolerance (or the one
#: asked for, if tighter), as in the plain fixed point.
REFINE_TOL = 1e-10
_ALPHA_MIN = 1.0 / 256.0

_STATIC_CACHE: dict = {}
_CACHE_SIZE = 4


def _static(network):
    """Flattened routes of a network, kept for the last few networks (a sizer evaluates one
    network many times with other capacities); keyed by id() and checked by weak reference."""
    key = id(network)
    hit = _STATIC_CACHE.get(key)
    if hit is not None and hit[0]() is network:
        return hit[1]
    st = _build_static(network)
    if len(_STATIC_CACHE) >= _CACHE_SIZE:
        _STATIC_CACHE.pop(next(iter(_STATIC_CACHE)))
    _STATIC_CACHE[key] = (weakref.ref(network), st)
    return st


def _build_static(network):
    policy = network.routing.policy
    if policy not in POLICIES:
        raise ValueError(
            f"routing policy: unknown policy {policy!r}; choose one of {', '.join(POLICIES)}"
        )
    for d in network.demands:
        if d.bandwidth != 1:
            raise ValueError(
                f"demand '{d.id}': bandwidth {d.bandwidth}: the peaked fixed point handles "
                "single-unit calls only; use method 'fixed-point' or 'simulate'"
            )
    alternate = policy == "alternate"
    inc = incidence(network, first_only=not alternate)
    traffic = np.asarray(inc.traffic, dtype=float)
    bad = ~np.isfinite(traffic) | (traffic < 0)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(
            f"demand '{network.demands[i].id}': traffic must be a finite number >= 0, "
            f"got {traffic[i]!r}"
        )
    st = {"alternate": alternate, "n_links": len(network.links),
          "n_demands": len(network.demands), "n_routes": inc.n_routes,
          "traffic": traffic, "demand_ids": network.demand_ids, "link_ids": network.link_ids,
          "target": np.array([d.target for d in network.demands], dtype=float)}
    step_route = np.asarray(inc.step_route, dtype=np.int64)
    st["step_route"] = step_route
    st["step_link"] = np.asarray(inc.step_link, dtype=np.int64)
    st["n_steps"] = len(step_route)
    rank = np.asarray(inc.route_rank, dtype=np.int64)
    st["step_over"] = over = rank[step_route] > 0
    st["step_cls"] = over.astype(np.int64)
    st["slot"] = st["step_link"] * 2 + st["step_cls"]
    st["step_base"] = traffic[inc.route_demand[step_route]] * np.asarray(inc.step_factor, float)
    st["max_rank"] = max_rank = int(rank.max()) + 1 if inc.n_routes else 1
    st["route_flat"] = inc.route_demand * max_rank + rank
    starts = np.searchsorted(step_route, np.arange(inc.n_routes))
    ok = inc.n_routes > 0 and np.all(np.diff(np.append(starts, len(step_route))) > 0)
    st["route_start"] = starts if ok else None
    st["rank_routes"] = [np.flatnonzero(rank == k) for k in range(1, max_rank)]
    st["overflow"] = alternate and max_rank > 1
    st["step_factor"] = np.asarray(inc.step_factor, dtype=float)
    _pairs(st, inc)
    st["reservations"] = (network.reservations() if alternate
                          else np.zeros(len(network.links), np.int64))
    return st


def _pairs(st, inc):
    """Static (step, step of the route before) pairs: a step's stream is made of parts of
    what each step of the demand's previous route loses.

    The pairs of one route are every step of it with every step of the route before, so
    they are kept as blocks ``pair_blocks`` (per route of rank 1 and up: its first and end
    step, and the previous route's), pairs in order step by step, each step with the
    previous route's steps in order. ``pair_group`` numbers, per pair in that order, the
    distinct (link of the step, link and class of the source step) combinations.
    """
    first = np.searchsorted(st["step_route"], np.arange(inc.n_routes))
    last = np.append(first[1:], len(st["step_route"]))
    alt = (np.concatenate(st["rank_routes"]).astype(np.int64) if st["rank_routes"]
           else np.zeros(0, np.int64))
    blocks = np.stack([first[alt], last[alt], first[alt - 1], last[alt - 1]], axis=1)
    st["pair_blocks"] = blocks = blocks.reshape(-1, 4).astype(np.int64)
    n_here, n_before = blocks[:, 1] - blocks[:, 0], blocks[:, 3] - blocks[:, 2]
    # the pairs' steps and source steps, only to number the groups (not kept)
    pair_step = np.repeat(np.concatenate([np.arange(a, b) for a, b in blocks[:, :2]])
                          if len(blocks) else np.zeros(0, np.int64),
                          np.repeat(n_before, n_here))
    pair_src = (np.concatenate([np.tile(np.arange(c, d), b - a) for a, b, c, d in blocks])
                if len(blocks) else np.zeros(0, np.int64))
    key = st["step_link"][pair_step] * (2 * st["n_links"]) + st["slot"][pair_src]
    _, group = np.unique(key, return_inverse=True)
    st["pair_group"] = group.reshape(-1).astype(np.int32 if len(key) < 2**31 else np.int64)
    st["n_groups"] = int(group.max()) + 1 if len(key) else 0


def _capacities(network, capacities):
    """Capacities as int64 in link order; the network's own when None."""
    if capacities is None:
        return network.capacities()
    caps = np.asarray(capacities)
    n = len(network.links)
    if caps.shape != (n,):
        raise ValueError(f"capacities: expected {n} values (one per link), got shape {caps.shape}")
    if caps.dtype.kind not in "iubf":
        raise ValueError(f"capacities: expected integers, got dtype {caps.dtype}")
    flt = caps.astype(float)
    bad = ~np.isfinite(flt) | (flt != np.round(flt)) | (flt < 0)
    if bad.any():
        j = int(np.flatnonzero(bad)[0])
        raise ValueError(
            f"capacities: link '{network.links[j].id}' has capacity {caps.tolist()[j]!r}; "
            "capacities must be whole numbers >= 0"
        )
    return flt.astype(np.int64)


class _Problem:
    """One evaluation: the static arrays, the capacities and the link model chosen."""

    def __init__(self, network, caps, link_model, equivalent, split="equal"):
        self.__dict__.update(_static(network))
        self.caps = caps
        self.link_model = link_model
        self.equivalent = equivalent
        self.split = split
        self.zero_cap = caps[self.step_link] == 0

    # -- link state -> stream moments -------------------------------------------------------
    def sweep(self, b, zo, thin=True, precise=False):
        """Route blocking, reach, and every stream's mean and peakedness.

        ``b``: blocking per route step; ``zo``: peakedness of what each (link, class) loses,
        shape (n_links, 2). ``thin=False``: every route offered its demand's whole traffic,
        unthinned, as Poisson (the heaviest loads: the 'full links' start).
        """
        q = np.maximum(1.0 - b, Q_FLOOR)
        if self.route_start is not None and self.n_steps:
            Q = np.multiply.reduceat(q, self.route_start)
        else:
            Q = np.exp(np.bincount(self.step_route, weights=np.log(q), minlength=self.n_routes))
        if precise:
            S = np.bincount(self.step_route, weights=np.log(q), minlength=self.n_routes)
            L = -np.expm1(S)
        else:
            L = 1.0 - Q
        reach = np.ones(self.n_routes)
        if not thin:
            return L, reach, self.step_base.copy(), np.ones(self.n_steps)
        p = Q[self.step_route] / q  # pass probability of the route's other links
        for idx in self.rank_routes:
            reach[idx] = reach[idx - 1] * L[idx - 1]
        m = self.step_base * reach[self.step_route] * p
        if not self.overflow:
            return L, reach, m, np.ones(self.n_steps)
        return L, reach, m, self.peakedness(m, b, zo)

    def peakedness(self, m, b, zo):
        """Peakedness of every step's stream, its own and its companions' bursts included.

        The stream on a step of route k is the overflow of route k - 1: parts of what each
        link of that route loses (weights ``w``, by lost calls). What a link loses in one
        class is one stream; the parts of it that reach a link, over every demand's step,
        together form one random part of it, of fraction ``P``, and so of peakedness
        ``1 + P (Z_o - 1)`` (random splitting). A step's stream meets the blocking of its
        parts' bursts as they arrive together, not as independent parcels.
        """
        # compiled passes over the pairs, block by block (netdim._peaked_kernels): the same
        # sums as np.bincount over arrays of the pairs would give, in the same order
        return stream_peakedness(m, b, zo, self.step_factor, self.step_route, self.slot,
                                 self.pair_blocks, self.pair_group, self.n_routes,
                                 self.n_groups)

    # -- stream moments -> stream blocking --------------------------------------------------
    def link_state(self, m, z):
        """Blocking of every stream, lost peakedness per (link, class), the link figures."""
        if not self.overflow:
            # only Poisson streams: the plain fixed point's link model (Erlang B, or the
            # reservation chain, which equals Erlang B without overflow traffic)
            load = np.bincount(self.step_link, weights=m, minlength=self.n_links)
            B = np.asarray(erlang_b(load, self.caps), dtype=float)
            return B[self.step_link], np.ones((self.n_links, 2)), None
        f = self.factors(m, z)
        b = f.stream_blocking(self.step_link, self.step_over, z)
        return b, np.array(f.lost_peakedness), f

    def factors(self, m, z):
        """The link model on every link, from the streams' means and peakedness."""
        cm = np.bincount(self.slot, weights=m, minlength=2 * self.n_links).reshape(-1, 2)
        cv = np.bincount(self.slot, weights=m * z, minlength=2 * self.n_links).reshape(-1, 2)
        return link_factors(cm[:, 0], cm[:, 1], cv[:, 1], self.caps, self.reservations,
                            self.link_model, self.equivalent, checked=True,
                            split=self.split)

    def heavy_state(self):
        """Blockings under the heaviest loads (every route offered all its demand's traffic).

        The 'all links full' end for a second solve; B = 1 itself would not do: with every
        link blocked no call reaches an alternate route and the iteration falls back to idle.
        """
        _, _, m, z = self.sweep(np.zeros(self.n_steps), None, thin=False)
        b, zo, _ = self.link_state(m, z)
        return b, zo

    # -- the iteration ----------------------------------------------------------------------
    def solve(self, b0, zo0, tol, max_iter, label):
        """Repeated substitution with the plain fixed point's adaptive damping."""
        nb = self.n_steps
        x = np.concatenate([np.asarray(b0, dtype=float), np.asarray(zo0, dtype=float).ravel()])
        alpha = 1.0
        prev_res = np.inf
        prev_f = None
        res = np.inf
        for it in range(1, max_iter + 1):
            _, _, m, z = self.sweep(x[:nb], x[nb:].reshape(-1, 2))
            bn, zn, _ = self.link_state(m, z)
            f = np.concatenate([bn, zn.ravel()]) - x
            res = float(np.max(np.abs(f))) if f.size else 0.0
            if res <= tol:
                return bn, zn, it, res, alpha
            if prev_f is not None:
                ratio = res / prev_res if prev_res > 0 else np.inf
                # not np.dot/vdot: BLAS calls were seen to cost 1000x more on a busy machine
                dot = float((f * prev_f).sum())
                if dot < 0.0 and ratio > 0.7:
                    # successive changes swing back and forth: take shorter steps
                    alpha = max(alpha * 0.5, _ALPHA_MIN)
                elif dot > 0.0 and ratio < 1.0 and alpha < 1.0:
                    # steady one-way progress: damping only slows it down
                    alpha = min(1.0, alpha * 1.5)
            prev_res, prev_f = res, f
            x = x + alpha * f
        raise ConvergenceError(
            f"peaked fixed point ({label}) did not converge in {max_iter} iterations: largest "
            f"change in stream blocking or peakedness {res:.3g} > tol {tol:.3g} (last damping "
            f"factor {alpha:.3g}); try a larger max_iter, a looser tol, or method 'simulate'",
            iterations=max_iter,
            residual=res,
        )

    # -- results ----------------------------------------------------------------------------
    def evaluation(self, b, zo, iterations, residual, status, message, warnings, details):
        L, reach, m, z = self.sweep(b, zo, precise=True)
        pad = np.ones(self.n_demands * self.max_rank)
        pad[self.route_flat] = L
        blocking = np.prod(pad.reshape(self.n_demands, self.max_rank), axis=1)
        f = self.factors(m, z)
        offered = np.bincount(self.step_link, weights=m, minlength=self.n_links)
        carried = np.bincount(self.step_link, weights=m * (1.0 - b), minlength=self.n_links)
        # what a Poisson call of each class would meet, for links no stream of it reaches
        probe = np.column_stack([f.first, f.overflow / f.overflow_peakedness])
        first = self.step_cls == 0
        link_b = _weighted(self.step_link[first], b[first], m[first], probe[:, 0], self.n_links)
        if self.alternate:
            link_a = _weighted(self.step_link[~first], b[~first], m[~first], probe[:, 1],
                               self.n_links)
        else:
            link_a = link_b
        with np.errstate(divide="ignore", invalid="ignore"):
            var = np.bincount(self.step_link, weights=m * z, minlength=self.n_links)
            link_z = np.where(offered > 0, var / np.where(offered > 0, offered, 1.0), 1.0)
        det = {"link_model": self.link_model, "equivalent": self.equivalent, "split": self.split,
               "step_blocking": b, "step_peakedness": z, "lost_peakedness": zo,
               "route_blocking": L, "route_reach": reach, "link_peakedness": link_z,
               "largest_link_peakedness": float(link_z.max()) if link_z.size else 1.0}
        det.update(details)
        return Evaluation(
            method=METHOD,
            demand_ids=self.demand_ids,
            offered=self.traffic,
            blocking=np.clip(blocking, 0.0, 1.0) + 0.0,
            target=self.target,
            link_ids=self.link_ids,
            capacity=self.caps,
            link_offered=offered,
            link_carried=carried,
            link_blocking=link_b,
            link_blocking_alternate=link_a,
            iterations=iterations,
            residual=residual,
            status=status,
            message=message,
            warnings=tuple(warnings),
            details=det,
        )


def _gap(one, two, b1, b2):
    """Largest difference between two solutions, in demand or stream blocking."""
    gap_d = np.abs(two.blocking - one.blocking)
    gap_s = float(np.max(np.abs(b2 - b1))) if b1.size else 0.0
    return max(float(gap_d.max()) if gap_d.size else 0.0, gap_s)


def _weighted(link, b, w, fallback, n_links):
    """Load-weighted mean blocking per link; ``fallback`` where no load is offered."""
    tot = np.bincount(link, weights=w, minlength=n_links)
    num = np.bincount(link, weights=w * b, minlength=n_links)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(tot > 0, num / np.where(tot > 0, tot, 1.0), fallback)


def _start_state(prob, start):
    """Blocking per route step and lost peakedness per (link, class) to start from."""
    flat = np.ones((prob.n_links, 2))
    if isinstance(start, str):
        if start == "idle":
            return np.zeros(prob.n_steps), flat
        if start == "full":
            return prob.heavy_state()
        raise ValueError(
            f"start: expected 'idle', 'full', an Evaluation or an array, got {start!r}"
        )
    if isinstance(start, Evaluation):
        sb = start.details.get("step_blocking")
        sz = start.details.get("lost_peakedness")
        if (sb is not None and sz is not None and np.shape(sb) == (prob.n_steps,)
                and np.shape(sz) == (prob.n_links, 2)):
            return np.array(sb, dtype=float), np.array(sz, dtype=float)
        if len(start.link_blocking) != prob.n_links:
            raise ValueError(
                f"start: the evaluation has {len(start.link_blocking)} links, "
                f"the network {prob.n_links}"
            )
        start = np.column_stack([start.link_blocking, start.link_blocking_alternate])
    arr = np.asarray(start, dtype=float)
    if arr.shape == (prob.n_steps,):
        b = arr
    elif arr.shape == (prob.n_links,):
        b = arr[prob.step_link]
    elif arr.shape == (prob.n_links, 2):
        b = arr[prob.step_link, prob.step_cls]
    else:
        raise ValueError(
            f"start: expected link blockings of shape ({prob.n_links},) or ({prob.n_links}, 2), "
            f"or stream blockings of shape ({prob.n_steps},), got {arr.shape}"
        )
    if not np.all((b >= 0) & (b <= 1)):
        raise ValueError("start: blockings must lie in [0, 1]")
    return np.array(b, dtype=float), flat


def peaked_fixed_point(network, capacities=None, link_model="ipp", equivalent="table",
                       tol=1e-10, max_iter=1000, start=None, split="equal") -> Evaluation:
    """End-to-end blocking with the mean and variance of every stream offered to each link.

    Parameters
    ----------
    network : Network
        Single-unit calls (bandwidth 1); fixed or alternate routing, trunk reservation and
        per-link holding times as the file gives them.
    capacities : array_like of int, optional
        One per link, in link order; default: the network's own capacities.
    link_model : {'ipp', 'ert', 'hayward'}
        The link model (see :mod:`netdim.peaked`): ``ipp`` (default) the IPP chain;
        ``ert`` / ``hayward`` the same with each class's loss rescaled to the equivalent
        random method's (Hayward's) total loss without reservation.
    equivalent : {'table', 'exact', 'rapp'}
        How equivalent random groups are found: interpolated in a table of exact solutions
        (default), solved for every link at every sweep (slower), or Rapp's closed form
        (poor for the overflow of lightly loaded groups).
    split : {'equal', 'peakedness'}
        How a link's overflow blocking is shared among the overflow streams it is offered:
        every stream meets the class's call congestion (default), or in proportion to each
        stream's peakedness (the rule for independent streams; measured further from
        simulation in networks, ``docs/measurements/peaked.md``).
    tol : float
        Convergence test: largest change of any stream's blocking or lost peakedness
        between two sweeps.
    max_iter : int
        Most sweeps per solve.
    start : None, 'idle', 'full', Evaluation or array_like, optional
        Starting blockings. None: idle links; under alternate routing also solved from full
        links (every route offered its demand's whole traffic), and both solutions are
        reported when they differ. An explicit start (an Evaluation of this or the plain
        fixed point, link blockings of shape (n_links,) or (n_links, 2), or one blocking per
        route step) solves once.

    Returns
    -------
    Evaluation
        ``method`` is ``'peaked-fixed-point'``; ``status`` ``'converged'`` or ``'bistable'``
        (then ``alternative`` holds the solution from full links). ``details``:
        ``link_model``, ``equivalent``, ``damping``, ``largest_link_peakedness`` (in the
        JSON), and the arrays ``step_blocking`` and ``step_peakedness`` (per route step,
        routes in demand and preference order), ``lost_peakedness`` (per link and class,
        first-choice then overflow), ``route_blocking``, ``route_reach`` and
        ``link_peakedness`` (of each link's offered traffic).

    Raises
    ------
    ValueError
        Bad capacities, tol, max_iter, start, traffic, routing policy, model names, or a
        demand with bandwidth other than 1.
    ConvergenceError
        The iteration did not settle within ``max_iter`` sweeps.

    Notes
    -----
    Route k of demand d is offered ``A_d prod_{m<k} L_m``; its step on link j carries
    ``m = A_d f_j reach_k p_j``, ``p_j = prod_{i in route, i != j} (1 - b_i)`` (``f_j``: the
    holding time on j over the demand's), and meets the blocking its link model gives a
    stream of its peakedness in its class. The peakedness is kept when a later link holds
    calls for another time (an approximation, poor for the campus shuttle; see the design
    notes). Demand blocking is ``prod_k L_k``, ``L_k = 1 - prod_j (1 - b_j)``, as in the
    plain fixed point: the routes of one demand are taken as independent, which they are
    not; this is what limits the accuracy at light load (``docs/measurements/accuracy.md``).

    References
    ----------
    .. [1] R. I. Wilkinson, "Theories for toll traffic engineering in the U.S.A.", Bell
       System Technical Journal 35 (1956) 421-514.
    .. [2] A. Kuczura, D. Bajaj, "A method of moments for the analysis of a switched
       communication network's performance", IEEE Transactions on Communications 25
       (1977) 185-193 (a network evaluation carrying two moments per stream; from memory).
    .. [3] F. P. Kelly, "Blocking probabilities in large circuit-switched networks", Adv.
       Appl. Prob. 18 (1986) 473-505 (the reduced-load fixed point).
    .. [4] A. Girard, "Routing and Dimensioning in Circuit-Switched Networks",
       Addison-Wesley 1990.
    """
    if link_model not in LINK_MODELS:
        raise ValueError(
            f"link_model: unknown model {link_model!r}; choose one of {', '.join(LINK_MODELS)}"
        )
    if equivalent not in EQUIVALENTS:
        raise ValueError(
            f"equivalent: unknown method {equivalent!r}; choose one of {', '.join(EQUIVALENTS)}"
        )
    if split not in SPLITS:
        raise ValueError(f"split: unknown rule {split!r}; choose one of {', '.join(SPLITS)}")
    if not (isinstance(tol, (int, float, np.floating)) and np.isfinite(tol) and tol > 0):
        raise ValueError(f"tol: must be a positive number, got {tol!r}")
    if isinstance(max_iter, bool) or not isinstance(max_iter, (int, np.integer)) or max_iter < 1:
        raise ValueError(f"max_iter: must be an integer >= 1, got {max_iter!r}")
    caps = _capacities(network, capacities)
    prob = _Problem(network, caps, link_model, equivalent, split)

    explicit = start is not None
    if explicit:
        b0, z0 = _start_state(prob, start)
        label = "from the given start"
    else:
        b0, z0 = np.zeros(prob.n_steps), np.ones((prob.n_links, 2))
        label = "from idle links"
    b, zo, it, res, alpha = prob.solve(b0, z0, tol, max_iter, label)
    message = f"converged in {it} iterations (largest change {res:.2g})"
    main = prob.evaluation(b, zo, it, res, EvaluationStatus.CONVERGED.value, message, [],
                           {"damping": alpha})
    if explicit or not prob.alternate or prob.n_links == 0:
        return main

    # Alternate routing may have several solutions: solve from the other end too.
    try:
        hb, hz = prob.heavy_state()
        b2, zo2, it2, res2, alpha2 = prob.solve(hb, hz, tol, max_iter, "from full links")
    except ConvergenceError as exc:
        return replace(main, warnings=main.warnings + (
            f"the solve from full links did not converge ({exc.iterations} iterations, "
            f"residual {exc.residual:.2g}); a second solution cannot be ruled out",))
    other = prob.evaluation(b2, zo2, it2, res2, EvaluationStatus.CONVERGED.value,
                            f"converged in {it2} iterations from full links", [],
                            {"damping": alpha2, "start": "full"})
    gap = _gap(main, other, b, b2)
    same = (f"converged in {it} iterations from idle links and {it2} from full links, to the "
            f"same solution (largest change {max(res, res2):.2g})")
    if gap <= BISTABLE_GAP:
        return replace(main, iterations=it + it2, message=same)
    refine = min(tol, REFINE_TOL)
    if refine < tol:
        # Each end stopped within about tol of its own limit: solve both on before calling
        # them two solutions (as the plain fixed point does).
        try:
            b, zo, it_r, res, alpha = prob.solve(b, zo, refine, max_iter,
                                                 "refining the solution from idle links")
            b2, zo2, it2_r, res2, alpha2 = prob.solve(b2, zo2, refine, max_iter,
                                                      "refining the solution from full links")
        except ConvergenceError as exc:
            return replace(main, iterations=it + it2, warnings=main.warnings + (
                f"the solves from idle and from full links stopped {gap:.3g} apart (tol "
                f"{tol:g}) and could not be refined to tol {refine:g} ({exc}); a second "
                "solution cannot be ruled out",))
        main = prob.evaluation(b, zo, it + it_r, res, EvaluationStatus.CONVERGED.value,
                               message, [], {"damping": alpha})
        other = prob.evaluation(b2, zo2, it2 + it2_r, res2, EvaluationStatus.CONVERGED.value,
                                f"converged in {it2 + it2_r} iterations from full links", [],
                                {"damping": alpha2, "start": "full"})
        gap = _gap(main, other, b, b2)
        if gap <= BISTABLE_GAP:
            return replace(main, iterations=it + it2, message=(
                same + f"; both solved on to tol {refine:g} in {it_r} and {it2_r} more "
                "iterations agree"))
    gap_d = np.abs(other.blocking - main.blocking)
    i = int(np.argmax(gap_d)) if gap_d.size else 0
    worst = (f"; demand '{main.demand_ids[i]}' {main.blocking[i]:.4g} vs "
             f"{other.blocking[i]:.4g}") if gap_d.size else ""
    warning = (
        "two solutions of the peaked fixed-point equations (bistable network): from idle "
        f"links and from full links they differ by up to {gap:.3g} in stream or demand "
        f"blocking{worst}; the low-blocking one is reported, see 'alternative'; more trunk "
        "reservation usually removes the high-blocking state"
    )
    return replace(main, status=EvaluationStatus.BISTABLE.value, alternative=other,
                   message=message + "; a second solution from full links",
                   warnings=main.warnings + (warning,))


def applies(network) -> bool:
    """True when the network has overflow for the peaked model to follow: alternate
    routing, some demand with a second route, and single-unit calls only (the peaked link
    model has no multi-rate form)."""
    return (network.routing.policy == "alternate"
            and any(len(d.routes) > 1 for d in network.demands)
            and not network.is_multirate)


def multirate_problem(network) -> str | None:
    """Why the peaked model cannot evaluate ``network`` (its first demand of more than one
    unit), or None."""
    for d in network.demands:
        if d.bandwidth != 1:
            return (f"demand '{d.id}' has bandwidth {d.bandwidth}; the peaked model handles "
                    "single-unit calls only: use 'fixed-point' or 'simulate'")
    return None


def default_method(network) -> str:
    """The evaluation a network gets when none is named: the peaked fixed point where it
    :func:`applies` (measured closer to simulation and to the exact chain there,
    ``docs/measurements/peaked.md``), else the plain fixed point (the two are the same
    equations without overflow)."""
    return METHOD if applies(network) else "fixed-point"

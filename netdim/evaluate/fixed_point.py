"""End-to-end blocking by the reduced-load (Erlang fixed-point) approximation.

Each link is treated as an independent loss system offered the traffic of every route over
it, thinned by the blocking of the route's other links; the link blockings that make this
consistent are found by repeated substitution with adaptive damping
(:mod:`netdim.evaluate._reduced_load`). This module holds the public entry points, the search
for a second solution under alternate routing (bistability) and the conservative variant.

:class:`FixedPoint` prepares a network once and is then called with capacities: the form a
sizer that evaluates one network many times should use. :func:`fixed_point` is the same for
one call.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from netdim.errors import ConvergenceError
from netdim.evaluate._network import labels, resolve_capacities
from netdim.evaluate._reduced_load import ReducedLoad, RouteArrays
from netdim.evaluate.result import Evaluation
from netdim.vocabulary import EvaluationStatus

__all__ = ["FixedPoint", "fixed_point", "BISTABLE_GAP", "REFINE_TOL", "OPTIONS"]

#: Two solutions closer than this (largest difference in any link or demand blocking) count
#: as one.
BISTABLE_GAP = 1e-6
#: Before two solutions are called two, both are solved on to this tolerance (or the one
#: asked for, if tighter): a loose ``tol`` stops each end that far (or further) from its
#: limit, and two ends of one solution would look like two.
REFINE_TOL = 1e-10
#: Keyword options of :func:`fixed_point` (the command line takes its checks from here).
OPTIONS = ("tol", "max_iter", "start")
#: Options of the conservative variant.
CONSERVATIVE_OPTIONS = ("tol", "max_iter")


def _check_options(tol, max_iter):
    if not (isinstance(tol, (int, float, np.floating)) and np.isfinite(tol) and tol > 0):
        raise ValueError(f"tol: must be a positive number, got {tol!r}")
    if isinstance(max_iter, bool) or not isinstance(max_iter, (int, np.integer)) or max_iter < 1:
        raise ValueError(f"max_iter: must be an integer >= 1, got {max_iter!r}")


class FixedPoint:
    """The reduced-load evaluation of one network, prepared once, called with capacities.

    ``FixedPoint(network)(capacities, start=previous)`` gives the same
    :class:`~netdim.evaluate.result.Evaluation` as
    ``fixed_point(network, capacities, start=previous)``; the route arrays are built on the
    first use of a network and kept with it, so repeated calls pay only for the iteration.

    Parameters
    ----------
    network : Network

    Raises
    ------
    ValueError
        Unknown routing policy, or a traffic or holding time that is not finite.

    Examples
    --------
    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> net = Network("one", (Site("A"), Site("B")), (Link("AB", ("A", "B"), 10),),
    ...               (Demand("AB", ("A", "B"), 5.0, routes=(Route((0,), (1.0,)),)),))
    >>> fp = FixedPoint(net)
    >>> [round(float(fp([c]).blocking[0]), 5) for c in (8, 10, 12)]
    [0.07005, 0.01838, 0.00344]
    """

    def __init__(self, network):
        self.network = network
        self.arrays = RouteArrays.of(network)

    def __call__(self, capacities=None, *, conservative=False, tol=1e-10, max_iter=1000,
                 start=None) -> Evaluation:
        """Evaluate at ``capacities``; the options are those of :func:`fixed_point`."""
        _check_options(tol, max_iter)
        caps = resolve_capacities(self.network, capacities)
        caps.setflags(write=False)  # our own copy; the Evaluation keeps it uncopied
        rl = ReducedLoad(self.arrays, caps, labels(self.network).link_ids)
        if conservative:
            if start is not None:
                raise ValueError("start: does not apply to the conservative method")
            return _conservative(self.network, rl, tol, max_iter)
        return _reduced_load(self.network, rl, tol, max_iter, start)


def fixed_point(network, capacities=None, conservative=False, tol=1e-10, max_iter=1000,
                start=None) -> Evaluation:
    """End-to-end blocking of every demand by the reduced-load approximation.

    Parameters
    ----------
    network : Network
    capacities : array_like of int, optional
        One per link, in link order; default: the network's own capacities.
    conservative : bool
        Offer every link its un-thinned load (the product bound); no iteration under fixed
        routing. Under alternate routing the un-thinned loads include the overflow they
        cause, found by a monotone iteration (see Notes).
    tol : float
        Convergence test: largest change of any link blocking between two sweeps.
    max_iter : int
        Most sweeps per solve.
    start : None, 'idle', 'full', Evaluation or array_like, optional
        Starting link blockings. None: all links idle (B = 0); under alternate routing also
        solved from all links full (the blockings under un-thinned loads, every route
        offered its demand's whole traffic), and both solutions are reported when they
        differ. An explicit start (e.g. the previous Evaluation, for a sizer's warm start)
        solves once.

    Returns
    -------
    Evaluation
        ``method`` is ``'fixed-point'`` or ``'conservative'``; ``status`` is ``'converged'``
        or ``'bistable'`` (then ``alternative`` holds the solution from the full start).
        ``details`` holds ``link_state`` (blocking per link and stream), ``route_blocking``
        and ``route_reach`` (numpy arrays, not in the JSON) and ``classes``.

    Raises
    ------
    ValueError
        Bad capacities, tol, max_iter, start, traffic or routing policy.
    ModelTooLargeError
        A multi-rate or trunk-reservation link of more than ``MAX_STATE_UNITS`` units.
    ConvergenceError
        The iteration did not settle within ``max_iter`` sweeps.

    Notes
    -----
    Fixed routing, one rate: ``B_j = E(rho_j, C_j)``, ``rho_j`` the sum over routes through
    j of ``A_r f_rj prod_{i in r, i != j} (1 - B_i)`` (``f_rj``: holding time on j over the
    demand's) [1]_; route blocking ``1 - prod (1 - B_i)``, composed as
    ``-expm1(sum log1p(-B_i))``. Multi-rate: the same thinning per call class with a
    Kaufman-Roberts link [2]_. Alternate routing: each link a birth-death chain with a
    first-choice and an overflow stream per class, the overflow admitted only while the
    reservation stays free; route k of a demand is offered ``A_d prod_{m<k} L_m`` and the
    demand is lost with probability ``prod_k L_k`` [3]_ [4]_.

    Alternate routing may have two stable solutions [5]_: solved from idle and from full
    links, two limits count as two only when both, solved on to ``REFINE_TOL``, still
    differ by more than ``BISTABLE_GAP`` in a link or demand blocking.

    *Conservative*: fixed routing, the product bound, at or above the exact blocking [6]_;
    alternate routing, the same un-thinned loads with their overflow, a monotone iteration
    whose limit is at or above every reduced-load solution (not proven above the exact
    blocking: overflow is peakier than Poisson). The argument is in
    ``docs/evaluate.md``.

    References
    ----------
    .. [1] F. P. Kelly, "Blocking probabilities in large circuit-switched networks",
       Adv. Appl. Prob. 18 (1986) 473-505.
    .. [2] K. W. Ross, "Multiservice Loss Models for Broadband Telecommunication
       Networks", Springer 1995.
    .. [3] A. Girard, "Routing and Dimensioning in Circuit-Switched Networks",
       Addison-Wesley 1990.
    .. [4] ITU-T Recommendation E.529.
    .. [5] R. J. Gibbens, P. J. Hunt, F. P. Kelly, "Bistability in communication
       networks", in Disorder in Physical Systems, Oxford 1990.
    .. [6] W. Whitt, "Blocking when service is required from several facilities
       simultaneously", AT&T Tech. J. 64 (1985) 1807-1856.

    Examples
    --------
    Two links in tandem, 5 E over both: the fixed point gives 0.0334, while the exact
    blocking is E(5, 10) = 0.0184.

    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> sites = (Site("A"), Site("B"), Site("C"))
    >>> links = (Link("AB", ("A", "B"), 10), Link("BC", ("B", "C"), 10))
    >>> d = Demand("AC", ("A", "C"), 5.0, routes=(Route((0, 1), (1.0, 1.0)),))
    >>> ev = fixed_point(Network("tandem", sites, links, (d,)))
    >>> round(float(ev.blocking[0]), 4), str(ev.status)
    (0.0334, 'converged')
    """
    return FixedPoint(network)(capacities, conservative=conservative, tol=tol,
                               max_iter=max_iter, start=start)


def _evaluation(network, rl, B, q, logq, *, method, iterations, residual, message,
                warnings=(), details=None, thin=True) -> Evaluation:
    figs = rl.figures(B, q, logq, thin=thin)
    det = figs.pop("details")
    det.update(details or {})
    return Evaluation.from_link_state(
        network, rl.caps, method=method, status=EvaluationStatus.CONVERGED,
        iterations=iterations, residual=residual, message=message, warnings=tuple(warnings),
        details=det, **figs,
    )


def _start_state(rl, start):
    a = rl.a
    shape = (a.n_links, a.n_streams)
    if isinstance(start, str):
        if start == "idle":
            return np.zeros(shape)
        if start == "full":
            return rl.heavy_state()
        raise ValueError(
            f"start: expected 'idle', 'full', an Evaluation or an array, got {start!r}"
        )
    if isinstance(start, Evaluation):
        state = start.details.get("link_state")
        if state is None or np.shape(state) != shape:
            state = np.repeat(np.asarray(start.link_blocking, dtype=float), a.n_streams)
            if state.size != a.n_links * a.n_streams:
                raise ValueError(
                    f"start: the evaluation has {len(start.link_blocking)} links, "
                    f"the network {a.n_links}"
                )
        start = state
    arr = np.asarray(start, dtype=float)
    if arr.shape == (a.n_links,):
        arr = np.repeat(arr, a.n_streams).reshape(shape)
    if arr.shape != shape:
        raise ValueError(
            f"start: expected link blockings of shape {(a.n_links,)} or {shape}, "
            f"got {arr.shape}"
        )
    if not np.all((arr >= 0) & (arr <= 1)):
        raise ValueError("start: link blockings must lie in [0, 1]")
    return arr.reshape(shape)


def _gap(one, other, b_one, b_other):
    """Largest difference in a demand or link blocking, and the demand where it is worst."""
    gap_d = np.abs(other.blocking - one.blocking)
    gap_l = float(np.max(np.abs(b_other - b_one))) if b_one.size else 0.0
    gap = max(float(gap_d.max()) if gap_d.size else 0.0, gap_l)
    return gap, (int(np.argmax(gap_d)) if gap_d.size else None)


def _reduced_load(network, rl, tol, max_iter, start):
    a = rl.a
    explicit = start is not None
    B0 = _start_state(rl, start) if explicit else np.zeros((a.n_links, a.n_streams))
    B, q, lq, it, res, alpha = rl.solve(B0, tol, max_iter, "from the given start"
                                        if explicit else "from idle links")
    message = f"converged in {it} iterations (largest change {res:.2g})"
    main = _evaluation(network, rl, B, q, lq, method="fixed-point", iterations=it,
                       residual=res, message=message, details={"damping": alpha})
    if explicit or not a.alternate or a.n_links == 0:
        return main

    # Alternate routing may have several solutions: solve from the other end too.
    try:
        B2, q2, lq2, it2, res2, alpha2 = rl.solve(rl.heavy_state(), tol, max_iter,
                                                  "from full links")
    except ConvergenceError as exc:
        return replace(main, warnings=main.warnings + (
            f"the solve from full links did not converge ({exc.iterations} iterations, "
            f"residual {exc.residual:.2g}); a second solution cannot be ruled out",))
    other = _evaluation(network, rl, B2, q2, lq2, method="fixed-point", iterations=it2,
                        residual=res2, message=f"converged in {it2} iterations from full links",
                        details={"damping": alpha2, "start": "full"})
    gap, worst = _gap(main, other, B, B2)
    same = (f"converged in {it} iterations from idle links and {it2} from full links, to the "
            f"same solution (largest change {max(res, res2):.2g})")
    if gap <= BISTABLE_GAP:
        return replace(main, iterations=it + it2, message=same)
    refine = min(tol, REFINE_TOL)
    if refine < tol:
        # Each end stopped within about tol of its own limit: solve both on before calling
        # them two solutions.
        try:
            B, q, lq, it_r, res, alpha = rl.solve(B, refine, max_iter,
                                                  "refining the solution from idle links")
            B2, q2, lq2, it2_r, res2, alpha2 = rl.solve(B2, refine, max_iter,
                                                        "refining the solution from full links")
        except ConvergenceError as exc:
            return replace(main, iterations=it + it2, warnings=main.warnings + (
                f"the solves from idle and from full links stopped {gap:.3g} apart (tol "
                f"{tol:g}) and could not be refined to tol {refine:g} ({exc}); a second "
                "solution cannot be ruled out",))
        fine = _evaluation(network, rl, B, q, lq, method="fixed-point", iterations=it + it_r,
                           residual=res, message=message, details={"damping": alpha})
        other = _evaluation(network, rl, B2, q2, lq2, method="fixed-point",
                            iterations=it2 + it2_r, residual=res2,
                            message=f"converged in {it2 + it2_r} iterations from full links",
                            details={"damping": alpha2, "start": "full"})
        gap, worst = _gap(fine, other, B, B2)
        if gap <= BISTABLE_GAP:
            return replace(main, iterations=it + it2, message=(
                same + f"; both solved on to tol {refine:g} in {it_r} and {it2_r} more "
                "iterations agree"))
        main = fine
    where = (f"; demand '{main.demand_ids[worst]}' {main.blocking[worst]:.4g} vs "
             f"{other.blocking[worst]:.4g}") if worst is not None else ""
    warning = (
        "two solutions of the fixed-point equations (bistable network): from idle links and "
        f"from full links they differ by up to {gap:.3g} in link or demand blocking{where}; "
        "the low-blocking one is reported first, the high-blocking one as the second "
        "solution; more trunk reservation usually removes the high-blocking state"
    )
    return replace(main, status=EvaluationStatus.BISTABLE, alternative=other,
                   message=message + "; a second solution from full links",
                   warnings=main.warnings + (warning,))


def _conservative(network, rl, tol, max_iter):
    """The conservative evaluation (un-thinned loads; see :func:`fixed_point`, Notes)."""
    a = rl.a
    free = np.ones((a.n_links, a.n_streams))
    B, q, lq = rl.link_blocking(rl.sweep(free, thin=False, every_route=True).loads)
    if not (a.alternate and a.max_rank > 1):
        return _evaluation(
            network, rl, B, q, lq, method="conservative", iterations=0, residual=0.0,
            message="product bound: every link offered its un-thinned load (no iteration)",
            thin=False,
        )
    res = np.inf
    warns = ["conservative under alternate routing: at or above every reduced-load solution, "
             "but not proven above the exact blocking (overflow is peakier than Poisson); "
             "check plans by simulation"]
    it = 0
    while it < max_iter:
        it += 1
        Bn, qn, _ = rl.link_blocking(rl.sweep(q, thin=False).loads)
        res = float(np.max(np.abs(Bn - B))) if B.size else 0.0
        # The iterates fall monotonically; the minimum guards against rounding.
        B, q = np.minimum(B, Bn), np.maximum(q, qn)
        if res <= tol:
            break
    if res > tol:
        warns.append(f"conservative iteration stopped after {max_iter} sweeps (largest "
                     f"change {res:.2g}); its blockings stay at or above the limit")
    return _evaluation(
        network, rl, B, q, None, method="conservative", iterations=it, residual=res,
        message=(f"un-thinned loads with their overflow: {it} monotone sweeps from every "
                 f"route offered its demand's whole traffic (largest change {res:.2g})"),
        warnings=warns, thin=False,
    )

"""The public entry point of sizing, :func:`dimension`: arguments checked once, then sizing
(for cost or net value), then, when asked, the check by simulation."""

from __future__ import annotations

import time

from netdim.dimension.calibrate import calibrate_by_simulation
from netdim.dimension.day_sizer import size_over_day
from netdim.dimension.net_value import size_for_net_value
from netdim.dimension.options import DEFAULT_BOUND_TIME, SizingOptions, VerifyOptions
from netdim.dimension.plan import Plan
from netdim.dimension.sizer import prepare, size_to_targets

__all__ = ["dimension", "VERIFY_METHODS"]

#: Values of ``dimension(verify=...)`` given as a word; None means ``'none'``.
VERIFY_METHODS = ("none", "simulate")


def _dimension_iv(model, solver, mip_gap, time_limit, max_iter, local_search, objective,
                  bound_time, verify):
    """Every argument of :func:`dimension` checked, once: ``(SizingOptions, VerifyOptions
    or None)``."""
    sizing = SizingOptions(model=model, solver=solver, mip_gap=mip_gap, time_limit=time_limit,
                           max_iter=max_iter, local_search=bool(local_search),
                           objective=objective, bound_time=bound_time)
    if verify is None or (isinstance(verify, str) and verify == "none"):
        return sizing, None
    if isinstance(verify, VerifyOptions):
        return sizing, verify
    if isinstance(verify, str) and verify == "simulate":
        return sizing, VerifyOptions()
    raise ValueError(f"verify: unknown value {verify!r}; choose one of "
                     f"{', '.join(VERIFY_METHODS)} (or None, or a VerifyOptions)")


def dimension(network, *, model="fixed-point", solver="highs", mip_gap=1e-4, time_limit=None,
              max_iter=20, local_search=True, objective="cost",
              bound_time=DEFAULT_BOUND_TIME, verify=None, progress=None) -> Plan:
    """Choose integer capacities meeting every demand's blocking target at least cost.

    Parameters
    ----------
    network : Network
    model : {'fixed-point', 'conservative', 'exact', 'peaked-fixed-point'}
        What the plan must satisfy: the reduced-load approximation [1]_, the conservative
        product bound (un-thinned loads), the exact solution (small networks only), or the
        reduced-load evaluation with the peakedness of overflow [3]_ (single-unit calls,
        objective 'cost'; under overflow no lower bound is proven for it, so the plan's is
        0 unless every cheaper plan could be listed and evaluated).
    solver : {'highs', 'cbc'}
        Solver of every MILP and LP: HiGHS (highspy) or PuLP's bundled CBC.
    mip_gap : float
        Relative gap each MILP is solved to.
    time_limit : float or None
        Safety stop of each MILP, seconds.
    max_iter : int
        Most outer iterations (MILP, then the loads re-evaluated).
    local_search : bool
        Run the local search after the MILP iterations.
    objective : {'cost', 'net-value'}
        ``'net-value'``: maximise value carried minus cost instead (every demand needs a
        ``value``; no target is enforced and no lower bound on cost is given).
    bound_time : float
        Safety stop of the lower bound's work, seconds. That work is bounded by counts (cut
        rounds, solver nodes, plans listed), so the bound is the same on any machine unless
        this stop fires, which the plan then says.
    verify : None, 'none', 'simulate' or VerifyOptions
        Check the plan by simulation and calibrate it where a demand misses its target
        there (``'simulate'``: with the default :class:`VerifyOptions`).
    progress : callable(fraction, message) or None
        Called with ``None`` and one line per step of a long run.

    Returns
    -------
    Plan

    Raises
    ------
    ValueError
        An unknown model, solver, objective or verify value (listing the valid ones), an
        option out of range, a link whose bounds contradict each other, or
        ``objective='net-value'`` with a demand without a value.
    ModelTooLargeError
        Work out of reach: loss tables beyond their limit (a load too large for its
        module), or ``model='exact'`` on a network too large for the exact method.
    ConvergenceError
        An evaluation that did not converge.

    Notes
    -----
    A network with demand over the day (``network.day``) is sized by
    :func:`~netdim.dimension.day_sizer.size_over_day`: every target on its
    ``target_basis`` over the day, no lower bound claimed.

    The loop, the link dropping, the local search, the bounds and the calibration are
    described in ``docs/design/sizing.md``; the bounds' proofs in ``docs/theory/``.

    References
    ----------
    .. [1] F. P. Kelly, "Blocking probabilities in large circuit-switched networks",
       Advances in Applied Probability 18 (1986) 473-505.
    .. [2] ITU-T Recommendation E.529, "Network dimensioning using end-to-end GOS
       objectives".
    .. [3] R. I. Wilkinson, "Theories for toll traffic engineering in the U.S.A.", Bell
       System Technical Journal 35 (1956) 421-514.

    Examples
    --------
    One trunk group offered 10 erlangs with a 1 % target needs 18 circuits (Erlang B
    gives 0.0071 at 18 and 0.0122 at 17):

    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> net = Network("one", (Site("A"), Site("B")), (Link("AB", ("A", "B")),),
    ...               (Demand("AB", ("A", "B"), 10.0, routes=(Route((0,), (1.0,)),)),))
    >>> plan = dimension(net)
    >>> int(plan.capacities[0]), plan.cost, plan.lower_bound, str(plan.status)
    (18, 18.0, 18.0, 'optimal-within-gap')
    """
    t_start = time.perf_counter()
    sizing, verify = _dimension_iv(model, solver, mip_gap, time_limit, max_iter, local_search,
                                   objective, bound_time, verify)
    if network.day is not None:
        # demand over the day (issue 20): busy-hour sizing, then adjusted over the day
        return size_over_day(network, sizing, verify=verify, progress=progress,
                             t_start=t_start)
    choices, base = prepare(network, sizing)
    if sizing.objective == "net-value":
        plan = size_for_net_value(network, choices, model=sizing.model, solver=sizing.solver,
                                  base=base, progress=progress, t_start=t_start)
    else:
        plan = size_to_targets(network, sizing, progress=progress, t_start=t_start,
                               choices=choices, base=base)
    if verify is None:
        return plan
    return calibrate_by_simulation(network, plan, sizing, verify, progress=progress,
                                   t_start=t_start)

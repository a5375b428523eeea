"""Solvers of the transient loss chain behind :mod:`netdim.transient` (private).

One day of the chain on ``0..n`` (births ``lambda`` below n, deaths ``k / h``) from a start
distribution, period by period: by uniformization (compiled with numba) or by
:func:`scipy.integrate.solve_ivp` on the forward equations; and the periodic state of a
cyclic day by GMRES on the day map. The method notes are in docs/design/daily.md.

References
----------
A. Jensen, Skandinavisk Aktuarietidskrift 36 (1953) 87-91 (uniformization).
W. K. Grassmann, Computers & Operations Research 4 (1977) 47-53.
Y. Saad and M. H. Schultz, SIAM J. Sci. Stat. Comput. 7 (1986) 856-869 (GMRES).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import sparse, special
from scipy.integrate import solve_ivp
from scipy.sparse.linalg import LinearOperator, gmres

from netdim.errors import ConvergenceError

__all__ = ["run_day", "cyclic_start"]

# Uniformization sub-step: at most this many expected jumps, so the smallest Poisson weight
# (about exp(-x) of the largest) stays far above the smallest double and needs no cut-off.
_X_MAX = 400.0
# Poisson tail mass dropped per sub-step (the state is a probability vector, so this is
# also the absolute error it adds).
_EPS = 1e-17
# Largest ||p(end) - p(start)||_1 a cyclic solution may keep.
_CYCLIC_TOL = 1e-11


# --------------------------------------------------------------------------------------------
# uniformization (compiled)

_kernel = None


def _get_kernel():
    """The compiled uniformization step (numba, cached on disk; compiled on first use)."""
    global _kernel
    if _kernel is None:
        # numba is imported here, not at module top, so importing netdim stays quick
        import numba

        @numba.njit(cache=True, nogil=True)
        def step(p, lam, mu, dt, eps, out):  # pragma: no cover - compiled
            n = p.shape[0] - 1
            big = lam + n * mu
            x = big * dt
            if x <= 0.0:
                out[:] = p
                return dt * p[n]
            kmax = int(x + 12.0 * math.sqrt(x) + 40.0)
            # Poisson weights by the ratio recurrence out from the mode, then normalised
            # (exp of k log x - lgamma would lose about x log x ulps of each weight)
            w = np.empty(kmax + 1)
            mode = int(x)
            w[mode] = 1.0
            for k in range(mode + 1, kmax + 1):
                w[k] = w[k - 1] * x / k
            for k in range(mode, 0, -1):
                w[k - 1] = w[k] * k / x
            w /= w.sum()
            tail = np.empty(kmax + 1)  # tail[k] = P(Pois(x) > k), summed from the far end
            acc = 0.0
            for k in range(kmax, -1, -1):
                tail[k] = acc
                acc += w[k]
            last = kmax
            for k in range(int(x), kmax + 1):
                if tail[k] < eps:
                    last = k
                    break
            up = lam / big
            down = mu / big
            v = p.copy()
            nv = np.empty(n + 1)
            out[:] = w[0] * v
            integ = tail[0] * v[n]
            for k in range(1, last + 1):
                if n == 0:
                    nv[0] = v[0]
                else:
                    nv[0] = v[0] * (1.0 - up) + v[1] * down
                    for i in range(1, n):
                        nv[i] = (v[i] * (1.0 - up - i * down) + v[i - 1] * up
                                 + v[i + 1] * (i + 1) * down)
                    nv[n] = v[n] * (1.0 - n * down) + v[n - 1] * up
                v, nv = nv, v
                wk = w[k]
                for i in range(n + 1):
                    out[i] += wk * v[i]
                integ += tail[k] * v[n]
            return integ / big

        _kernel = step
    return _kernel


def _advance_uniform(p, lam, mu, dt):
    """(p after dt, time spent full during dt) by uniformization in sub-steps."""
    kernel = _get_kernel()
    n = p.size - 1
    x = (lam + n * mu) * dt
    pieces = max(1, math.ceil(x / _X_MAX))
    h = dt / pieces
    full = 0.0
    for _ in range(pieces):
        out = np.empty_like(p)  # fresh each piece: the caller's array is never written
        full += kernel(p, lam, mu, h, _EPS, out)
        p = out
    return p, full


# --------------------------------------------------------------------------------------------
# forward equations by solve_ivp


def _generator(lam, mu, n):
    """Transposed generator (column form, dp/dt = Q^T p) of the loss chain, as CSC."""
    k = np.arange(n + 1)
    births = np.where(k < n, lam, 0.0)
    deaths = k * mu
    diag = -(births + deaths)
    return sparse.diags(
        [births[:-1], diag, deaths[1:]], [-1, 0, 1], shape=(n + 1, n + 1), format="csc"
    )


def _advance_ode(p, lam, mu, dt, t_eval=None):
    """(p after dt, time spent full, states at t_eval) by DOP853 on the forward equations.

    An explicit method: the system is only mildly stiff (its rates are at most twice the
    uniformization rate), and Radau or BDF at this tolerance cost 6 to 50 times more.
    """
    n = p.size - 1
    qt = _generator(lam, mu, n)
    pick = sparse.csc_matrix(([1.0], ([0], [n])), shape=(1, n + 1))
    system = sparse.bmat([[qt, None], [pick, sparse.csc_matrix((1, 1))]], format="csr")

    def rhs(t, y):
        return system @ y

    y0 = np.append(p, 0.0)
    sol = solve_ivp(rhs, (0.0, dt), y0, method="DOP853", rtol=1e-12, atol=1e-15, t_eval=t_eval)
    if not sol.success:
        raise ConvergenceError(f"transient chain: the ODE solver stopped: {sol.message}")
    # not clipped or renormalised: the day map must stay linear for the cyclic solve
    return sol.y[:-1, -1], float(sol.y[-1, -1]), sol.y[:-1]


# --------------------------------------------------------------------------------------------
# the day


def run_day(p, rates, hours, mu, method, steps, record):
    """Run one day from p. Returns end state, time full per period, grid states."""
    full = np.zeros(len(rates))
    grid = [p] if record else None
    for i, (lam, dt) in enumerate(zip(rates, hours, strict=True)):
        sub = dt / steps
        if method == "uniformization":
            for _ in range(steps if record else 1):
                p, f = _advance_uniform(p, lam, mu, sub if record else dt)
                full[i] += f
                if record:
                    grid.append(p)
        else:
            t_eval = np.linspace(0.0, dt, steps + 1)[1:] if record else None
            p, f, ys = _advance_ode(p, lam, mu, dt, t_eval)
            full[i] = f
            if record:
                grid.extend(ys[:, j] for j in range(steps))
    return p, full, grid


def cyclic_start(n, rates, hours, mu, method):
    """The periodic state ``p = p Phi`` (Phi: the day's transition matrix), solved directly.

    GMRES on ``v - Phi^T v + u (1^T v) = u`` with ``1^T u = 1``: since Phi is stochastic the
    solution has ``1^T v = 1`` and ``v = Phi^T v``. Each product is one day's run (linear in
    v); the eigenvalues of Phi other than 1 decay like ``exp(-k T / h)``, so few are needed.
    """
    # u: the truncated Poisson law at the day's mean load, also the first guess
    a = float(np.dot(rates, hours) / hours.sum()) / mu
    if a > 0:
        k = np.arange(n + 1)
        logw = k * math.log(a) - special.gammaln(k + 1.0)
        u = np.exp(logw - logw.max())
    else:
        u = np.eye(n + 1)[0]
    u /= u.sum()

    def day_map(v):
        return run_day(v, rates, hours, mu, method, 1, False)[0]

    def matvec(v):
        v = np.asarray(v, dtype=float).ravel()
        return v - day_map(v) + u * v.sum()

    op = LinearOperator((n + 1, n + 1), matvec=matvec, dtype=float)
    # the ODE's day map is accurate to about 1e-12 only: asking more would only add days
    rtol = 1e-14 if method == "uniformization" else 1e-11
    v, info = gmres(op, u, x0=u.copy(), rtol=rtol, atol=0.0, restart=min(n + 1, 60),
                    maxiter=2)
    p = np.maximum(v, 0.0)
    p /= p.sum()
    # a few plain days more only shrink the error; the last change is the residual
    res = np.inf
    for _ in range(3):
        q = day_map(p)
        q = np.maximum(q, 0.0) / q.sum()
        res = float(np.abs(q - p).sum())
        p = q
        if res <= _CYCLIC_TOL:
            return p, res
    raise ConvergenceError(
        f"cyclic day: the periodic state was not found (GMRES status {info}, residual "
        f"{res:.3g} > {_CYCLIC_TOL:.0e}); start the day from a given occupancy instead",
        residual=res,
    )

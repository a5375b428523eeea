"""Erlang's loss formula in mpmath, the outside reference of the formula tests and benchmarks.

``E(A, n) = A^n e^-A / Gamma(n + 1, A)`` with mpmath's upper incomplete gamma function
(real n by the same formula). Where mpmath's hypergeometric series give up
(``NoConvergence``, or a ValueError from ``hypercomb``, seen at A well above n), two other
exact forms are used: for whole n the finite sum ``1/E = sum_{j=0..n} n! / ((n - j)! A^j)``
(Erlang's formula written out), for real n the integral
``1/E = int_0^inf e^-u (1 + u/A)^n du`` (D. L. Jagerman, Bell System Technical Journal 53
(1974) 525-551) by mpmath's quadrature.
"""

from __future__ import annotations

import mpmath as mp


def mp_erlang(a, n, dps=50):
    """E(A, n) at ``dps`` digits, at the exact binary values of the doubles a and n."""
    with mp.workdps(dps):
        a, n = mp.mpf(float(a)), mp.mpf(float(n))
        if n == 0:
            return mp.mpf(1)
        if a == 0:
            return mp.mpf(0)
        try:
            return mp.exp(n * mp.log(a) - a - mp.log(mp.gammainc(n + 1, a)))
        except (mp.libmp.NoConvergence, ValueError):
            pass
        if n == int(n):
            total = term = mp.mpf(1)
            for j in range(int(n)):
                term *= (n - j) / a
                total += term
                if term < total * mp.mpf(10) ** (-dps - 5):
                    break
            return 1 / total
        peak = max(mp.mpf(0), n - a)
        width = 40 * mp.sqrt(n + a + 1)
        pts = [0, peak, peak + width, mp.inf] if peak > 0 else [0, width, mp.inf]
        inv = mp.quad(lambda u: mp.exp(-u + n * mp.log1p(u / a)), pts)
        return 1 / inv


def mp_log_erlang(a, n, dps=50):
    """log E(A, n) (mpmath keeps the exponent, so this is right where E underflows)."""
    with mp.workdps(dps):
        return mp.log(mp_erlang(a, n, dps))

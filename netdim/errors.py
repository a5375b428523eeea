"""The small family of errors netdim raises.

Every message names the item that is wrong (a file and line, a link, a demand) and what is wrong
with it, so that the command line can print it as one line and exit with status 2.
"""

from __future__ import annotations

__all__ = [
    "NetdimError",
    "NetworkFileError",
    "ConvergenceError",
    "InfeasibleError",
    "ModelTooLargeError",
]


class NetdimError(Exception):
    """Base class of every error netdim raises on purpose."""


class NetworkFileError(NetdimError):
    """A network file (or an in-memory network) is not valid.

    Parameters
    ----------
    problems : list of str
        One line per problem, each ``FILE:LINE: ITEM: problem``.
    """

    def __init__(self, problems):
        if isinstance(problems, str):
            problems = [problems]
        self.problems = list(problems)
        super().__init__("\n".join(self.problems))


class ConvergenceError(NetdimError):
    """An iterative method stopped before it converged.

    Parameters
    ----------
    message : str
        What was being solved, the iterations and the residual reached, and what to try.
    iterations : int
    residual : float
    """

    def __init__(self, message, iterations=0, residual=float("nan")):
        self.iterations = iterations
        self.residual = residual
        super().__init__(message)


class InfeasibleError(NetdimError):
    """Targets that no plan within the bounds can meet.

    Parameters
    ----------
    message : str
    demands : sequence of str
        The ids of the demands that cannot be met.
    """

    def __init__(self, message, demands=()):
        self.demands = tuple(demands)
        super().__init__(message)


class ModelTooLargeError(NetdimError):
    """The exact method was asked for a network whose state space is too large."""

"""netdim: end-to-end blocking and least-cost sizing of networks of shared, blocking resources.

The public API: read a network (:func:`read_network`), evaluate it (:func:`evaluate`), size it
(:func:`dimension`), and the single-resource loss formulas in :mod:`netdim.erlang`.
"""

from netdim.dimension import Plan, dimension
from netdim.errors import (
    ConvergenceError,
    InfeasibleError,
    ModelTooLargeError,
    NetdimError,
    NetworkFileError,
)
from netdim.evaluate import METHODS, Evaluation, evaluate
from netdim.model import Demand, Link, Network, Route, Routing, Site
from netdim.netfile import read_network, write_network

__version__ = "0.1.0"

__all__ = [
    "__version__",
    "NetdimError",
    "NetworkFileError",
    "ConvergenceError",
    "InfeasibleError",
    "ModelTooLargeError",
    "Site",
    "Link",
    "Route",
    "Demand",
    "Routing",
    "Network",
    "evaluate",
    "dimension",
    "Plan",
    "Evaluation",
    "METHODS",
    "read_network",
    "write_network",
]

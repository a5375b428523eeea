"""Shared fixtures: small invented networks (demo data, never check values) and the Erlang B
recursion the tests check against.

The network fixtures are factories: ``one_link(cap, demands)`` and so on build a fresh
:class:`netdim.Network` for the arguments a test gives.
"""

import os

import pytest
from hypothesis import settings

from netdim.model import Demand, Link, Network, Route, Routing, Site

# Property tests search the same examples on every run (CI must not fail by chance on a
# new example); HYPOTHESIS_PROFILE=explore searches afresh when hunting for bugs by hand.
settings.register_profile("repeatable", derandomize=True, print_blob=True)
settings.register_profile("explore", derandomize=False, print_blob=True)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "repeatable"))

_LINE = """\
name: line
sites:
  - {{id: A}}
  - {{id: B}}
  - {{id: C}}
links:
  - {{id: AB, ends: [A, B], cost_per_module: 1.0{ab_extra}}}
  - {{id: BC, ends: [B, C], cost_per_module: 2.0}}
demands:
  - {{id: AB, between: [A, B], traffic: 20, routes: [[AB]]}}
  - {{id: BC, between: [B, C], traffic: 15, routes: [[BC]]}}
  - {{id: AC, between: [A, C], traffic: 10, routes: [[AB, BC]]}}
defaults: {{target: 0.01}}
{tail}"""


def _line_yaml(ab_extra: str = "", tail: str = "") -> str:
    return _LINE.format(ab_extra=ab_extra, tail=tail)


def _erlang_b(a, c):
    # Erlang B by the standard recursion B(0)=1, B(k)=aB/(k+aB) (Erlang 1917; any handbook)
    b = 1.0
    for k in range(1, c + 1):
        b = a * b / (k + a * b)
    return b


def _one_link(cap, demands):
    sites = (Site("A"), Site("B"))
    ds = tuple(
        Demand(f"D{i}", ("A", "B"), a, bandwidth=b, routes=(Route((0,), (1.0,)),))
        for i, (a, b) in enumerate(demands)
    )
    return Network("one", sites, (Link("AB", ("A", "B"), cap),), ds)


def _tandem(cap, a):
    sites = (Site("A"), Site("B"), Site("C"))
    links = (Link("AB", ("A", "B"), cap), Link("BC", ("B", "C"), cap))
    d = Demand("AC", ("A", "C"), a, routes=(Route((0, 1), (1.0, 1.0)),))
    return Network("tandem", sites, links, (d,))


def _triangle(cap, a, reservation, policy="alternate", holdings=(1.0, 1.0)):
    sites = (Site("A"), Site("B"), Site("C"))
    links = (Link("AB", ("A", "B"), cap), Link("BC", ("B", "C"), cap),
             Link("AC", ("A", "C"), cap))
    ds = (
        Demand("AB", ("A", "B"), a, routes=(Route((0,), (1.0,)), Route((2, 1), holdings))),
        Demand("BC", ("B", "C"), a, routes=(Route((1,), (1.0,)), Route((0, 2), holdings))),
        Demand("AC", ("A", "C"), a, routes=(Route((2,), (1.0,)), Route((0, 1), holdings))),
    )
    return Network("tri", sites, links, ds, routing=Routing(policy, reservation=reservation))


@pytest.fixture
def line_yaml():
    """``line_yaml(ab_extra='', tail='')``: the A-B-C line network (20 E on A-B, 15 E on B-C,
    10 E over both; circuit costs 1 and 2; 1 % targets) as network-file text, with extra
    fields on link AB and extra top-level lines appended."""
    return _line_yaml


@pytest.fixture
def erlang_b_ref():
    """``erlang_b_ref(a, c)``: Erlang B by its recursion (Erlang 1917; any handbook)."""
    return _erlang_b


@pytest.fixture
def one_link():
    """``one_link(cap, [(traffic, bandwidth), ...])``: one link A-B, one demand per class."""
    return _one_link


@pytest.fixture
def tandem():
    """``tandem(cap, a)``: links A-B and B-C of ``cap`` units, one demand A-C over both."""
    return _tandem


@pytest.fixture
def triangle():
    """``triangle(cap, a, reservation, policy='alternate', holdings=(1, 1))``: three links,
    a demand per pair with the two-link alternate route."""
    return _triangle

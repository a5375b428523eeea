"""Small networks shared by several test modules (invented data, not check values), and the
Erlang B recursion they are checked with."""

from netdim.model import Demand, Link, Network, Route, Routing, Site

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


def line_yaml(ab_extra: str = "", tail: str = "") -> str:
    """The A-B-C line network of issue 5 (20 E on A-B, 15 E on B-C, 10 E over both; circuit
    costs 1 and 2; 1 % targets) as network-file text, with extra fields on link AB and extra
    top-level lines appended."""
    return _LINE.format(ab_extra=ab_extra, tail=tail)


def erlang_b(a, c):
    # Erlang B by the standard recursion B(0)=1, B(k)=aB/(k+aB) (Erlang 1917; any handbook)
    b = 1.0
    for k in range(1, c + 1):
        b = a * b / (k + a * b)
    return b


def one_link(cap, demands):
    sites = (Site("A"), Site("B"))
    ds = tuple(
        Demand(f"D{i}", ("A", "B"), a, bandwidth=b, routes=(Route((0,), (1.0,)),))
        for i, (a, b) in enumerate(demands)
    )
    return Network("one", sites, (Link("AB", ("A", "B"), cap),), ds)


def tandem(cap, a):
    sites = (Site("A"), Site("B"), Site("C"))
    links = (Link("AB", ("A", "B"), cap), Link("BC", ("B", "C"), cap))
    d = Demand("AC", ("A", "C"), a, routes=(Route((0, 1), (1.0, 1.0)),))
    return Network("tandem", sites, links, (d,))


def triangle(cap, a, reservation, policy="alternate", holdings=(1.0, 1.0)):
    sites = (Site("A"), Site("B"), Site("C"))
    links = (Link("AB", ("A", "B"), cap), Link("BC", ("B", "C"), cap),
             Link("AC", ("A", "C"), cap))
    ds = (
        Demand("AB", ("A", "B"), a, routes=(Route((0,), (1.0,)), Route((2, 1), holdings))),
        Demand("BC", ("B", "C"), a, routes=(Route((1,), (1.0,)), Route((0, 2), holdings))),
        Demand("AC", ("A", "C"), a, routes=(Route((2,), (1.0,)), Route((0, 1), holdings))),
    )
    return Network("tri", sites, links, ds, routing=Routing(policy, reservation=reservation))

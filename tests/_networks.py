"""Small network files shared by several test modules (invented data, not check values)."""

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

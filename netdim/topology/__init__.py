"""Importing real topologies: GraphML or GML (read with networkx) plus a traffic model, written
as a network file a person can read and edit.

:func:`import_topology` does the whole job and returns the file's text with a report of what
was dropped or guessed; :func:`read_topology` reads and tidies the graph alone;
:func:`write_text` writes the text atomically without replacing a file unless asked.
"""

from netdim.topology.build import (
    ROUTE_MODES,
    ImportReport,
    ImportResult,
    LinkCosts,
    import_topology,
)
from netdim.topology.emit import write_text
from netdim.topology.geo import EARTH_RADIUS_KM, great_circle_km
from netdim.topology.graphfile import (
    FORMATS,
    Finding,
    Topology,
    TopologyLink,
    TopologySite,
    read_topology,
)
from netdim.topology.traffic import (
    CSV_COLUMNS,
    WEIGHTS,
    DemandTable,
    Gravity,
    PairTraffic,
    Uniform,
    pair_traffic,
)

__all__ = [
    "import_topology",
    "read_topology",
    "write_text",
    "great_circle_km",
    "pair_traffic",
    "ImportResult",
    "ImportReport",
    "LinkCosts",
    "Gravity",
    "Uniform",
    "DemandTable",
    "PairTraffic",
    "Topology",
    "TopologySite",
    "TopologyLink",
    "Finding",
    "FORMATS",
    "WEIGHTS",
    "CSV_COLUMNS",
    "ROUTE_MODES",
    "EARTH_RADIUS_KM",
]

"""Network files: read and check a YAML network file, write one back.

The format (see README and the demo files in ``networks/``)::

    name: Example region
    sites:
      - {id: NORTH, name: North exchange, x: 0.0, y: 1.0}
    links:
      - {id: NORTH-SOUTH, ends: [NORTH, SOUTH], capacity: 30, module: 1,
         cost_per_module: 1.0, fixed_cost: 0.0, max_capacity: 1000, installed: 0,
         length: 12.0, reservation: 2}
    demands:
      - id: N-S                      # default "ORIGIN-DEST"
        between: [NORTH, SOUTH]
        traffic: 12.5                # erlangs; or rate (per hour) with holding (hours)
        holding: 1.0                 # default defaults.holding
        bandwidth: 1
        target: 0.01                 # default defaults.target
        value: 3.0                   # value per carried erlang (economic sizing)
        routes:                      # optional: link ids in order, first = preferred
          - [NORTH-SOUTH]
          - [NORTH-HUB, {link: HUB-SOUTH, holding: 0.25}]
    defaults: {target: 0.01, holding: 1.0}
    # demand over the day (instead of traffic/rate in a demand; see netdim.netfile._day):
    #   rates: [5, 10, 30]  period: 1  start: 0  cyclic: false  target_basis: peak | day
    routing: {policy: fixed, max_hops: 2, reservation: 0, max_routes: 4}

Reading checks the whole file and reports every problem found (up to
:data:`MAX_PROBLEMS`) in one :class:`~netdim.errors.NetworkFileError`, one line each,
``FILE:LINE: ITEM: problem``: every value is checked for type, finiteness and range before
anything uses it. Top-level keys starting with ``x-`` and ``description`` / ``notes`` are
kept in ``Network.extra``. A site may be written as its bare id. Only ``true``/``false`` are
yes/no values and dates stay text (as in YAML 1.2), so ids such as ``NO`` stay text.

Limits: files larger than :data:`MAX_FILE_SIZE` bytes (unless ``max_size`` says otherwise)
and anything but a regular file are refused before reading; nesting, aliases and numbers
are limited as :mod:`netdim.netfile._yaml` says; magnitudes taken for typing mistakes are
traffic above ``MAX_TRAFFIC`` erlangs, capacities above ``MAX_UNITS``, holding times above
``MAX_HOLDING`` hours, routes longer than ``MAX_HOPS`` links (:mod:`netdim.netfile._sections`).

Writing: :func:`write_plan` writes a sized network back into the text it was read from,
changing only capacities; :func:`write_network` writes any network (one built in Python too)
as a fresh file.
"""

from __future__ import annotations

from netdim.model import Network
from netdim.netfile._fields import MAX_PROBLEMS
from netdim.netfile._plan import check_plan_path, dumps_plan, write_plan
from netdim.netfile._read import MAX_FILE_SIZE, loads_network, read_network, read_network_text
from netdim.netfile._sections import MAX_HOLDING, MAX_HOPS, MAX_TRAFFIC, MAX_UNITS
from netdim.netfile._write import dumps_network, network_to_dict, write_network

__all__ = [
    "read_network",
    "loads_network",
    "read_network_text",
    "write_network",
    "write_plan",
    "dumps_plan",
    "check_plan_path",
    "network_to_dict",
    "dumps_network",
    "network_summary",
    "MAX_PROBLEMS",
    "MAX_FILE_SIZE",
    "MAX_TRAFFIC",
    "MAX_UNITS",
    "MAX_HOLDING",
    "MAX_HOPS",
]


def network_summary(network: Network) -> dict:
    """Counts and totals of a network, as ``netdim check`` shows them: see
    :meth:`netdim.model.Network.summary`."""
    return network.summary()

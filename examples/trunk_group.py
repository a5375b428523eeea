"""Size one trunk group with the single-resource formulas.

A busy-hour load of 42.5 erlangs between two exchanges: circuits for a 1% grade of service,
the traffic those circuits could carry at that grade, what overflows to a tandem route when
only 40 circuits are installed, and the economic size for a given circuit cost.
"""

from netdim.erlang import (
    erlang_b,
    moe_servers,
    servers_for,
    traffic_for,
)
from netdim.overflow import overflow_moments

load = 42.5  # erlangs offered in the busy hour
n = servers_for(load, 0.01)
print(f"circuits for 1% at {load} E: {n} (blocking {erlang_b(load, n):.5f})")
print(f"largest load {n} circuits carry at 1%: {traffic_for(n, 0.01):.3f} E")

mean, var = overflow_moments(load, 40)
print(f"overflow from 40 circuits: mean {mean:.3f} E, variance {var:.3f}, "
      f"peakedness {var / mean:.3f}")

# A circuit costs as much per busy hour as 0.3 erlang of carried traffic earns.
print(f"economic size (cost 0.3 per circuit, value 1 per carried erlang): "
      f"{moe_servers(load, 0.3, 1.0)} circuits")

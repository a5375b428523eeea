"""Campus car parks over a day: a morning wave and an evening event, sized both ways.

Reads the invented campus day (examples/campus_day.yaml: arrivals per hour from 07:00 to
21:00), evaluates it over the day by the carried-load approximation and checks that by
simulating the day (fixed seed, 95% intervals); then sizes the parks and the shuttle to the
targets in the worst hour of the day, and the busy-hour way (each demand at its largest rate
x mean stay), and states the saving. Parking provision and accessible spaces follow local
codes: these figures are planning estimates, not a substitute for them.
"""

import netdim

net = netdim.read_network("examples/campus_day.yaml")
day = net.day
print(f"{net.name}: {len(net.links)} links, {len(net.demands)} visitor groups, "
      f"{day.n_periods} periods of {day.period:g} h from 07:00")

fpa = netdim.evaluate(net, method="day-fpa")
sim = netdim.evaluate(net, method="day-simulate", seed=7, days=400)
print("\nAt the capacities in the file (worst hour of the day, and the day's lost share):")
print(f"{'group':<17} {'hour':>5} {'approx':>8} {'simulated':>9}  95% interval"
      f"      {'lost approx':>11} {'simulated':>9}")
for i, did in enumerate(net.demand_ids):
    p = int(sim.day.peak_period[i])
    lo, hi = sim.day.blocking_interval[i, p]
    print(f"{did:<17} {7 + p:>3}:00 {fpa.day.blocking[i, p]:>8.4f} "
          f"{sim.day.blocking[i, p]:>9.4f}  {lo:.4f} - {hi:.4f}"
          f"  {fpa.day.lost_fraction[i]:>11.4f} {sim.day.lost_fraction[i]:>9.4f}")

# size to the worst-hour targets, then check the plan by simulating the day and tighten it
# where the approximation was optimistic (overflow between parks)
plan = netdim.dimension(net, verify=netdim.VerifyOptions(seed=3, calls=400_000))
d = plan.details
print(f"\nSized to the targets in the worst hour ({plan.model}, checked by simulation):")
print(f"{'link':<11} {'over the day':>12} {'busy-hour way':>13}")
for j, lid in enumerate(net.link_ids):
    print(f"{lid:<11} {int(plan.capacities[j]):>12} {d['busy_hour_capacities'][j]:>13}")
print(f"{'cost':<11} {plan.cost:>12g} {d['busy_hour_cost']:>13g}")
print(f"before the check by simulation the plan cost {d['unverified_cost']:g} "
      f"({d['verify_rounds']} calibration round(s))")
saving = (d["busy_hour_cost"] - plan.cost) / d["busy_hour_cost"]
print(f"saving over the busy-hour way: {100 * saving:.1f}% of its cost")

check = plan.verification
print(f"\nThe plan simulated over the day ({check.details['days']} days; worst hour, "
      "95% interval, target):")
for i, did in enumerate(net.demand_ids):
    lo, hi = check.blocking_interval[i]
    print(f"{did:<17} {check.blocking[i]:.4f}  {lo:.4f} - {hi:.4f}  target "
          f"{check.target[i]:.2f}  {check.verdicts()[i]}")

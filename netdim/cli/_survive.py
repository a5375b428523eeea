"""``netdim size --survive TARGET``: the option block and its run (called by size_cmd)."""

from __future__ import annotations

import json
import sys

from netdim.cli._study_options import fraction
from netdim.netfile import write_plan
from netdim.studies.survive import survivable_plan
from netdim.studies.tables import survivable_text

__all__ = ["add_survive_options", "run_survivable"]


def add_survive_options(p) -> None:
    g = p.add_argument_group("survivable sizing")
    g.add_argument("--survive", type=fraction, default=None, metavar="TARGET",
                   help="also keep every demand within TARGET (e.g. 5%%) under any single-link "
                   "failure, with one set of capacities")


def run_survivable(args, network, sizing) -> int:
    """Size for every single-link failure; print; the exit status."""
    if args.verify:
        raise ValueError("--survive: cannot be combined with --verify")
    for flag, value in (("--report", getattr(args, "report", None)),
                        ("--csv", getattr(args, "csv", None))):
        if value:
            raise ValueError(f"--survive: cannot be combined with {flag} (not yet written "
                             "for a survivable plan)")
    if sizing.objective != "cost":
        raise ValueError("--survive: sizes for cost; leave out --objective net-value")
    try:
        plan = survivable_plan(network, target=args.survive, sizing=sizing,
                               progress=None if args.quiet else
                               (lambda f, m: print(f"netdim size: {m}", file=sys.stderr,
                                                   flush=True)))
    except ValueError as exc:
        text = str(exc)
        if text.startswith("target:"):
            raise ValueError(f"{args.file}: --survive{text[len('target'):]}") from None
        raise
    if args.out:
        write_plan(network, args.out, plan.capacities, force=args.force)
    if args.json:
        print(json.dumps(plan.to_dict(), indent=2))
    else:
        print(survivable_text(plan, title=f"{network.name} ({args.file})"), end="")
    if str(plan.verdict) != "met":
        print(f"netdim size: not survivable: {plan.message}", file=sys.stderr)
        return 1
    return 0

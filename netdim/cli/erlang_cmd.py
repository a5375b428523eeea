"""``netdim erlang``: Erlang's loss formula for one trunk group; two quantities give the third."""

from __future__ import annotations

import json
import math
import sys

from netdim.erlang import MAX_ARG, MAX_TRAFFIC_SIZED, erlang_b, servers_for, traffic_for
from netdim.report.tables_csv import write_erlang_csv
from netdim.report.text import fixed_column, fmt_short, format_table, legend_lines, prob_column

__all__ = ["register", "run", "parse_values"]

_MAX_ROWS = 10000


def register(subparsers):
    p = subparsers.add_parser(
        "erlang",
        help="blocking, circuits or traffic of one trunk group (Erlang's loss formula)",
        description="Give any two of traffic, servers and target to get the third: traffic and "
        "servers give the blocking; traffic and target the fewest servers meeting it; servers "
        "and target the most traffic they carry within it. One option may be a range "
        "START:STOP:STEP (both ends included, at most 10000 values), which prints a table. "
        "Traffic and servers are at most 1e10 (traffic 9.9e9 when servers are asked "
        "for). No traffic needs no servers and loses "
        "nothing: its blocking is reported as 0. Servers that are not a whole number use the "
        "continuous extension of Erlang's formula, and a note says so.",
    )
    p.add_argument("--traffic", metavar="E", help="offered traffic in erlangs (or a range)")
    p.add_argument("--rate", metavar="R",
                   help="arrival rate in calls per hour (or a range); needs --holding")
    p.add_argument("--holding", metavar="H", type=float,
                   help="mean holding time in hours (with --rate)")
    p.add_argument("--servers", metavar="N", help="number of servers (circuits), or a range")
    p.add_argument("--target", metavar="P",
                   help="blocking target in (0, 1), e.g. 0.01 (or a range)")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.add_argument("--csv", metavar="DIR",
                   help="also write DIR/erlang.csv (the rows --json prints, one per line)")
    p.set_defaults(func=run)
    return p


def parse_values(option, text):
    """A number, or START:STOP:STEP (both ends included), as a list of floats."""
    parts = text.split(":")
    try:
        nums = [float(x) for x in parts]
    except ValueError:
        raise ValueError(
            f"{option}: expected a number or START:STOP:STEP, got {text!r}"
        ) from None
    if any(not math.isfinite(x) for x in nums):
        raise ValueError(f"{option}: values must be finite, got {text!r}")
    if len(nums) == 1:
        return nums, False
    if len(nums) != 3:
        raise ValueError(f"{option}: a range is START:STOP:STEP, got {text!r}")
    start, stop, step = nums
    if not step > 0:
        raise ValueError(f"{option}: range step must be > 0, got {step!r}")
    if stop < start:
        raise ValueError(f"{option}: range stop {stop!r} is below its start {start!r}")
    span = (stop - start) / step  # may be inf (1e308 / 1e-308): compare before rounding
    if not span < _MAX_ROWS:
        if not math.isfinite(span):
            shown = "too many"
        elif span < 1e9:
            shown = f"{math.floor(span + 1e-9) + 1:,}"
        else:
            shown = f"about {fmt_short(span)}"
        raise ValueError(
            f"{option}: range has {shown} values, at most {_MAX_ROWS} allowed "
            f"(range too long)"
        )
    count = math.floor(span + 1e-9) + 1
    return [start + i * step for i in range(count)], True


def _fmt(x):
    return f"{int(x)}" if float(x).is_integer() and abs(x) < 1e15 else f"{x:.6g}"


def _traffic_values(args):
    """(traffic values, is a range, the option they came from)."""
    if args.traffic is not None and args.rate is not None:
        raise ValueError("--traffic and --rate: give one or the other")
    if args.rate is not None:
        if args.holding is None:
            raise ValueError("--rate: needs --holding (mean holding time in hours)")
        if not args.holding > 0 or not math.isfinite(args.holding):
            raise ValueError(f"--holding: must be > 0 hours, got {args.holding!r}")
        rates, is_range = parse_values("--rate", args.rate)
        if any(r < 0 for r in rates):
            raise ValueError(f"--rate: must be >= 0, got {min(rates)!r}")
        traffic = [r * args.holding for r in rates]
        for r, a in zip(rates, traffic, strict=True):
            if not a <= MAX_ARG:
                raise ValueError(
                    f"--rate: {fmt_short(r)} calls per hour held {args.holding!r} hours is "
                    f"{a!r} erlangs; at most {fmt_short(MAX_ARG)} allowed"
                )
        return traffic, is_range, "--rate"
    if args.holding is not None:
        raise ValueError("--holding: only used with --rate")
    if args.traffic is None:
        return None, False, "--traffic"
    values, is_range = parse_values("--traffic", args.traffic)
    return values, is_range, "--traffic"


def _check_range(option, values, upper):
    for v in values or ():
        if v < 0:
            raise ValueError(f"{option}: must be >= 0, got {v!r}")
        if v > upper:
            raise ValueError(f"{option}: must be at most {fmt_short(upper)}, got {v!r}")


def _json_number(x):
    """A finite number for JSON (a check: the values are validated before any work)."""
    if not math.isfinite(x):
        raise ValueError(f"erlang: result {x!r} is not a finite number")
    return x


def run(args) -> int:
    traffic, t_range, t_option = _traffic_values(args)
    servers, s_range = (
        parse_values("--servers", args.servers) if args.servers is not None else (None, False)
    )
    target, p_range = (
        parse_values("--target", args.target) if args.target is not None else (None, False)
    )
    given = [x is not None for x in (traffic, servers, target)]
    if sum(given) != 2:
        raise ValueError(
            "erlang: give exactly two of --traffic (or --rate with --holding), --servers and "
            "--target"
        )
    if t_range + s_range + p_range > 1:
        raise ValueError("erlang: only one of the options may be a range")
    # validate every value before any work (the library would name its argument, not ours)
    # asked for servers, the traffic must leave the answer within the servers' range
    _check_range(t_option, traffic, MAX_TRAFFIC_SIZED if servers is None else MAX_ARG)
    _check_range("--servers", servers, MAX_ARG)
    for v in target or ():
        if not 0 < v < 1:
            raise ValueError(f"--target: must be in (0, 1), got {v!r}")

    def blocking(a, n):
        # no traffic offered: no call is lost, whatever the servers (the convention here)
        return 0.0 if a == 0 else erlang_b(a, n)

    rows = []
    if target is None:
        for a in traffic:
            for n in servers:
                rows.append({"traffic": a, "servers": n, "blocking": blocking(a, n)})
    elif servers is None:
        for a in traffic:
            for p in target:
                n = servers_for(a, p)
                rows.append({"traffic": a, "servers": n, "blocking": blocking(a, n), "target": p})
    else:
        for n in servers:
            for p in target:
                a = traffic_for(n, p)
                rows.append({"traffic": a, "servers": n, "blocking": blocking(a, n), "target": p})
    for r in rows:
        if isinstance(r["servers"], float) and r["servers"].is_integer():
            r["servers"] = int(r["servers"])
    real = sorted({r["servers"] for r in rows if isinstance(r["servers"], float)})
    if real:
        shown = ", ".join(_fmt(n) for n in real[:3]) + (", ..." if len(real) > 3 else "")
        verb = "is not a whole number" if len(real) == 1 else "are not whole numbers"
        print(f"netdim: note: --servers {shown} {verb}: the blocking is that of "
              f"the continuous extension E(A, n) = A^n e^-A / Gamma(n + 1, A)",
              file=sys.stderr)

    table = t_range or s_range or p_range
    if args.csv or args.json:
        for r in rows:
            for key, value in r.items():
                r[key] = _json_number(value)
    if args.csv:
        write_erlang_csv(rows, args.csv)
    if args.json:
        print(json.dumps(rows if table else rows[0], allow_nan=False))
        return 0
    solving = target is not None
    headers = ["traffic (E)", "servers", "blocking"] + (["target"] if solving else [])
    computed_traffic = solving and servers is not None
    columns = [
        # computed traffic: 4 decimals, more (or scientific) when tiny, as probabilities
        prob_column([r["traffic"] for r in rows]) if computed_traffic
        else _given_column([r["traffic"] for r in rows]),
        _given_column([r["servers"] for r in rows]),
        prob_column([r["blocking"] for r in rows]),
    ]
    if solving:
        columns.append(_given_column([r["target"] for r in rows]))
    body = [list(cells) for cells in zip(*columns, strict=True)]
    print(format_table(headers, body, align="r" * len(headers)))
    print(legend_lines("blocking: share of offered calls lost (Erlang's loss formula)"
                       + ("; target: the blocking asked for" if solving else "")))
    return 0


def _given_column(values, most=6):
    """Numbers as given, with the same decimals down the column: the fewest (at most
    ``most``) that show every value exactly; else each in 6 significant digits."""
    for decimals in range(most + 1):
        if all(abs(float(f"{v:.{decimals}f}") - v) <= 1e-12 * max(1.0, abs(v))
               for v in values):
            return fixed_column(values, decimals)
    return [_fmt(v) for v in values]

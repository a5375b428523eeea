"""The ``netdim`` command line: a thin layer over the library.

Each sub-command lives in its own module with a ``register(subparsers)`` function that adds
its parser and sets ``func``; ``func(args)`` returns the exit status. Errors netdim raises on
purpose (and bad arguments) become one line on stderr and exit status 2; nothing else prints.

Exit status (:data:`EXIT`): 0 all well; 1 some target not met or a plan infeasible; 2 bad
input (or work refused as beyond a stated limit); 3 a computation that did not converge.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from netdim.errors import ConvergenceError, NetdimError, NetworkFileError

__all__ = ["main", "build_parser", "EXIT"]

#: Exit statuses of every sub-command.
EXIT = {"ok": 0, "not-met": 1, "bad-input": 2, "not-converged": 3, "closed-pipe": 141}

#: Sub-command modules, in the order ``netdim --help`` lists them.
COMMAND_MODULES = ("erlang_cmd", "check_cmd", "evaluate_cmd", "size_cmd")


class _Parser(argparse.ArgumentParser):
    """argparse that exits 2 with one line (no usage block) on bad arguments."""

    def error(self, message):
        self.exit(2, f"netdim: error: {message} (see '{self.prog} --help')\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="netdim",
        description="Blocking, verification and least-cost sizing of networks of shared, "
        "blocking resources (trunk groups, car parks, shuttles).",
    )
    from netdim import __version__

    parser.add_argument("--version", action="version", version=f"netdim {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in COMMAND_MODULES:
        importlib.import_module(f"netdim.cli.{name}").register(sub)
    return parser


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help(sys.stderr)
        return 2
    try:
        status = int(args.func(args) or 0)
        sys.stdout.flush()
        return status
    except BrokenPipeError:
        return _closed_pipe()
    except NetworkFileError as exc:
        for line in exc.problems:
            print(line, file=sys.stderr)
        return EXIT["bad-input"]
    except ConvergenceError as exc:
        print(f"netdim: did not converge: {_one_line(exc)}", file=sys.stderr)
        return EXIT["not-converged"]
    except (NetdimError, ValueError, OSError) as exc:
        print(f"netdim: error: {_one_line(exc)}", file=sys.stderr)
        return EXIT["bad-input"]
    except KeyboardInterrupt:
        print("netdim: interrupted", file=sys.stderr)
        return 130


def _closed_pipe() -> int:
    """The reader of our output went away (``netdim ... | head``): stop quietly, with the
    shell's status for a write to a closed pipe (128 + SIGPIPE).

    Python would report the failed flush again at exit; point stdout at /dev/null first, as
    the Python documentation advises for SIGPIPE."""
    import os

    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):
        pass
    return EXIT["closed-pipe"]


def _one_line(exc) -> str:
    if isinstance(exc, OSError) and exc.filename:
        return f"{exc.filename}: {exc.strerror or exc}"
    return " ".join(str(exc).split())

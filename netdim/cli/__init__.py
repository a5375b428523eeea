"""The ``netdim`` command line: a thin layer over the library.

Each sub-command lives in its own module with a ``register(subparsers)`` function that adds
its parser and sets ``func``; ``func(args)`` returns the exit status. Only the module of the
command being run is imported (all of them for ``--help`` or a bad command), so a command
starts in the time its own imports take. Errors netdim raises on purpose (and bad arguments)
become one line on stderr and exit status 2; nothing else prints.

Exit status (:data:`EXIT`): 0 all well; 1 some target not met or a plan infeasible; 2 bad
input (or work refused as beyond a stated limit); 3 a computation that did not converge.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys

# One BLAS thread unless the user says otherwise (before numpy loads): the solvers' vector
# operations are too small to gain from threads, and on a busy machine OpenBLAS's waiting
# threads made the exact method's iterative solve 60 times slower in processor time
# (docs/measurements/evaluate.md).
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import netdim  # lazy (PEP 562): nothing is loaded until a name is used
from netdim.errors import ConvergenceError, NetdimError, NetworkFileError

__all__ = ["main", "build_parser", "EXIT"]

#: Exit statuses of every sub-command.
EXIT = {"ok": 0, "not-met": 1, "bad-input": 2, "not-converged": 3, "closed-pipe": 141}

#: Sub-command modules, in the order ``netdim --help`` lists them.
COMMAND_MODULES = ("erlang_cmd", "check_cmd", "import_cmd", "evaluate_cmd", "size_cmd",
                   "report_cmd", "failures_cmd", "growth_cmd", "compare_cmd", "headroom_cmd")


class _Version(argparse.Action):
    """``--version``, looked up only when asked for (importlib.metadata is not free)."""

    def __init__(self, option_strings, dest=argparse.SUPPRESS, default=argparse.SUPPRESS,
                 help="show netdim's version and exit"):
        super().__init__(option_strings, dest=dest, default=default, nargs=0, help=help)

    def __call__(self, parser, namespace, values, option_string=None):
        parser.exit(0, f"netdim {netdim.__version__}\n")


class _Parser(argparse.ArgumentParser):
    """argparse that exits 2 with one line (no usage block) on bad arguments."""

    def error(self, message):
        self.exit(2, f"netdim: error: {message} (see '{self.prog} --help')\n")


def build_parser(argv=None) -> argparse.ArgumentParser:
    """The parser; given the arguments, only with the sub-command they name (if any)."""
    parser = _Parser(
        prog="netdim",
        description="Blocking, verification and least-cost sizing of networks of shared, "
        "blocking resources (trunk groups, car parks, shuttles).",
    )
    parser.add_argument("--version", action=_Version)
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in _modules_for(argv):
        importlib.import_module(f"netdim.cli.{name}").register(sub)
    return parser


def _modules_for(argv):
    """The command modules to import for these arguments: the named command's alone (the
    top-level options take no values, so the first word not starting with '-' names it),
    else all of them (for --help, or an error listing the commands)."""
    if argv is not None:
        words = [w for w in argv if not w.startswith("-")]
        if words and f"{words[0]}_cmd" in COMMAND_MODULES:
            return (f"{words[0]}_cmd",)
        if not words and "--version" in argv and not {"-h", "--help"} & set(argv):
            return ()
    return COMMAND_MODULES


def main(argv=None) -> int:
    if argv is None:
        argv = sys.argv[1:]
    parser = build_parser(argv)
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

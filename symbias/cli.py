"""The ``symbias`` command line: parses arguments and wires the steps.

It holds no analysis.  Every sub-command lives in :mod:`symbias.commands`.
Errors derived from :class:`~symbias.errors.SymbiasError` become one line on
stderr (``file:line: cause``) and exit status 2 (bad input) or 1 (analysis
failed); ``--debug`` shows the traceback instead.  Warnings are one line each
too, located at the netlist when they carry no place of their own (numpy's
floating-point warnings).

Run as a program (:func:`run`, ``python -m symbias``), a command works under
the memory guard of :func:`symbias.limits.memory_guard`: running out of the
limit is a one-line :class:`~symbias.errors.LimitError`, never a swap storm.

Examples
--------
>>> main(["--version"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse
import importlib
import sys
import warnings
from contextlib import nullcontext

from . import __version__
from .commands import COMMANDS
from .errors import AnalysisError, SymbiasError, SymbiasWarning
from .limits import memory_guard, memory_limit, out_of_memory

__all__ = ["main", "build_parser", "EXIT_OK", "EXIT_ANALYSIS", "EXIT_USAGE"]

EXIT_OK = 0
EXIT_ANALYSIS = 1
EXIT_USAGE = 2


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors in one line with exit status 2."""

    def error(self, message: str):  # noqa: D401 - argparse API
        self.exit(EXIT_USAGE, f"{self.prog}: error: {message}\n")


def _one_line_warnings(place: str):
    """A ``showwarning`` that prints ``file:line: warning: text`` on one line.

    symbias's own warnings carry their location in the message; any other
    warning (numpy's "overflow encountered in multiply") is put at ``place``.
    """

    shown: set[str] = set()

    def show(message, category, filename, lineno, file=None, line=None) -> None:
        text = " ".join(str(message).split())
        if text in shown:  # the same warning from another line of the same loop says nothing new
            return
        shown.add(text)
        if issubclass(category, SymbiasWarning):
            where, _, rest = text.partition(": ")
            print(f"{where}: warning: {rest}" if rest else f"{place}: warning: {text}", file=sys.stderr)
        else:
            print(f"{place}: warning: {text} (numbers beyond the range of floating point in the evaluation)",
                  file=sys.stderr)

    return show


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every registered sub-command."""
    parser = _Parser(
        prog="symbias",
        description="Closed-form and numeric analysis of transistor bias circuits.",
        epilog="Results are design aids: sign-off needs full simulation and measurement.",
    )
    parser.add_argument("--version", action="version", version=f"symbias {__version__}")
    parser.add_argument("--debug", action="store_true", help="show a traceback on errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in COMMANDS:
        module = importlib.import_module(f".commands.{name}", __package__)
        module.register(sub)
    return parser


def main(argv: list[str] | None = None, *, guard_memory: bool = False) -> int:
    """Run the command line; return the exit status.

    ``guard_memory`` runs the command under :func:`symbias.limits.memory_guard`
    (as :func:`run` does); the limit is :data:`symbias.limits.MEMORY_LIMIT` or
    the environment variable :data:`symbias.limits.MEMORY_VARIABLE`.
    """
    for stream in (sys.stdout, sys.stderr):
        # a netlist may hold any characters; never fail on a terminal that cannot show them
        if hasattr(stream, "reconfigure"):
            stream.reconfigure(errors="backslashreplace")
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return EXIT_USAGE
    place = getattr(args, "netlist", None) or getattr(args, "id", None) or "symbias"
    limit = None
    try:
        limit = memory_limit() if guard_memory else None
        with warnings.catch_warnings(), _guarded(limit):
            warnings.simplefilter("always", SymbiasWarning)
            warnings.showwarning = _one_line_warnings(place)
            status = int(args.func(args) or EXIT_OK)
        sys.stdout.flush()  # a full disk or a closed pipe shows here, inside the handlers below
        return status
    except MemoryError:
        if args.debug:
            raise
        print(str(out_of_memory(limit).located(place)), file=sys.stderr)
        return EXIT_USAGE
    except ImportError as err:  # under the memory guard a library that cannot be mapped fails to import
        if args.debug or limit is None:
            raise
        print(str(out_of_memory(limit, f"a library could not be loaded ({err.name or err})").located(place)),
              file=sys.stderr)
        return EXIT_USAGE
    except SymbiasError as err:
        if args.debug:
            raise
        # an error found outside any file (an empty sweep range) is reported against the netlist
        print(str(err if err.path else err.located(place)), file=sys.stderr)
        return EXIT_ANALYSIS if isinstance(err, AnalysisError) else EXIT_USAGE
    except KeyboardInterrupt:  # pragma: no cover - interactive
        print("interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # e.g. piped into head: the reader wanted no more
        _silence_stdout()
        return EXIT_OK
    except OSError as err:  # stdout itself cannot be written (a full disk, /dev/full)
        _silence_stdout()
        print(f"symbias: cannot write the output: {err.strerror or err}", file=sys.stderr)
        return EXIT_ANALYSIS


def _guarded(limit: int | None):
    """The memory guard for a command; numpy is loaded first so that its own reservations do not count."""
    if limit is None:
        return nullcontext()
    import numpy  # noqa: F401 - its BLAS buffers are reserved at import, before the limit is set

    from .linear.polys import default_backend

    default_backend()  # python-flint loaded too: short of memory, its import would fail and the slow ring be used
    return memory_guard(limit)


def _silence_stdout() -> None:
    """Point stdout at the null device so that the interpreter's final flush cannot fail again."""
    import os

    try:
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, sys.stdout.fileno())
    except (OSError, ValueError):  # no file descriptor behind stdout (an embedding host): nothing to flush
        return


def run() -> None:
    """Entry point of the console script: :func:`main` under the memory guard."""
    sys.exit(main(guard_memory=True))


if __name__ == "__main__":  # pragma: no cover
    run()

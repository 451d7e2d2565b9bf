"""``python -m diag COMMAND ...``: a thin argparse layer over the library.

Each command lives in ``diag/commands/<name>.py`` and provides ``register(subparsers)`` (adds its parser and sets
``func``) and the handler.  Handlers return an exit status.  ``InputError`` becomes one line on stderr and status 2;
nothing reaches the user as a traceback.
"""
from __future__ import annotations

import argparse
import gc
import logging
import os
import sys
import warnings

from diag.commands import analyze, batch, ingest, predict, simulate
from diag.errors import InputError

# the commands in the order --help lists them; each module imports its heavy dependencies inside its handler
COMMANDS = (ingest, predict, simulate, analyze, batch)


class _Parser(argparse.ArgumentParser):
    """argparse that reports bad arguments on one line with status 2 (argparse's own default status is 2 too)."""

    def error(self, message: str):  # pragma: no cover - exercised through main()
        words = self.prog.split()
        where = f"python -m diag {words[-1]} --help" if len(words) > 1 else "python -m diag --help"
        self.exit(2, f"diag: error: {' '.join(message.split())} (see '{where}')\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="diag", description="Why did the microwave hop fade, and what did each cause cost.")
    parser.add_argument("-v", "--verbose", action="store_true", help="log progress and diagnostics to stderr")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for module in COMMANDS:
        module.register(sub)
    return parser


def _load_command(args: argparse.Namespace) -> None:
    """Load the modules the command's handler uses (its module's ``load()``, where it has one), then move every
    object loaded so far out of the garbage collector's reach and resume it.  For a process that runs one command
    and ends (``main(one_process=True)``, started with the collector paused): the modules' classes, functions and
    tables live as long as the process, and each collection walked them again (in an ``analyze`` of a 1-s week
    the collector's passes cost 0.057-0.065 s of CPU, 0.011-0.013 s after this)."""
    try:
        module = sys.modules.get(getattr(args.func, "__module__", ""))
        load = getattr(module, "load", None)
        if callable(load):
            load()
    finally:
        gc.freeze()
        gc.enable()


def main(argv: list[str] | None = None, *, one_process: bool = False) -> int:
    """Run the command ``argv`` names; returns the exit status.  ``one_process``: the caller is a process that runs
    this one command and ends, started with the garbage collector paused (``python -m diag``); the collector is
    resumed once the command's modules are loaded (:func:`_load_command`)."""
    try:
        return _main(argv, one_process)
    finally:
        if one_process and not gc.isenabled():   # --help, a bad argument: ended before the command ran
            gc.enable()


def _main(argv: list[str] | None, one_process: bool) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help (0) or bad arguments (2, message already printed)
        return int(exc.code or 0)
    logging.basicConfig(level=logging.INFO if args.verbose else logging.WARNING,
                        format="diag: %(message)s", stream=sys.stderr)
    if not getattr(args, "func", None):
        parser.print_help(sys.stderr)
        return 2
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("default")
            warnings.formatwarning = lambda msg, cat, *a, **k: f"diag: warning: {msg}\n"
            if one_process:
                _load_command(args)
            return int(args.func(args) or 0)
    except InputError as exc:
        print(f"diag: error: {exc.one_line()}", file=sys.stderr)
        return 2
    except BrokenPipeError:  # output piped into `head` and closed: not an error of ours
        try:
            sys.stdout = open(os.devnull, "w")
        except OSError:
            pass
        return 0
    except KeyboardInterrupt:
        print("diag: interrupted", file=sys.stderr)
        return 130
    except MemoryError:
        print("diag: error: out of memory; split the input or use 'batch'", file=sys.stderr)
        return 2
    except Exception as exc:  # a bug: still one line, never a traceback
        if args.verbose:
            raise
        text = " ".join(str(exc).split())[:300]
        print(f"diag: internal error ({type(exc).__name__}): {text} (rerun with -v for details)", file=sys.stderr)
        return 1

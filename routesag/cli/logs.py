"""Verbosity of the command line: which log records reach the terminal.

Levels: ``-q`` errors only; default warnings; ``-v`` routesag's own stage log
(logger ``routesag``) at INFO; ``-vv`` everything at DEBUG, third-party
libraries included (pyogrio's record counts, GDAL debug messages).

A run's warnings are collected and printed once, in the summary; for a
command that prints one the handler drops their log records, so none is
printed twice.
"""
from __future__ import annotations

import logging
import sys

OWN_LOGGER = "routesag"
#: Global options that may also follow the subcommand (``routesag run p.toml -v``).
GLOBAL_FLAGS = ("-q", "--quiet", "--verbose")
_VERBOSE_SHORT = ("-v", "-vv", "-vvv")
#: Attribute set on the log record of a run warning (see routesag.pipeline.RunContext.warn).
RUN_WARNING = "run_warning"


class _Handler(logging.StreamHandler):
    """routesag's terminal handler; marked so a second configuration replaces it."""


class _DropRunWarnings(logging.Filter):
    """Drops run warnings: the summary lists them."""

    def filter(self, record: logging.LogRecord) -> bool:
        return not getattr(record, RUN_WARNING, False)


def levels(verbose: int, quiet: bool) -> tuple[int, int]:
    """(third-party level, routesag level) for the command-line flags."""
    if quiet:
        return logging.ERROR, logging.ERROR
    if verbose <= 0:
        return logging.WARNING, logging.WARNING
    if verbose == 1:
        return logging.WARNING, logging.INFO
    return logging.DEBUG, logging.DEBUG


def configure(verbose: int = 0, quiet: bool = False, summary: bool = False) -> None:
    """Install (or replace) the terminal handler for these flags; ``summary``: the command lists the warnings."""
    root = logging.getLogger()
    for handler in [h for h in root.handlers if isinstance(h, _Handler)]:
        root.removeHandler(handler)
    others, own = levels(verbose, quiet)
    handler = _Handler(sys.stderr)
    handler.setFormatter(logging.Formatter("%(levelname)s: %(message)s" if verbose < 2
                                           else "%(levelname)s %(name)s: %(message)s"))
    if summary:
        handler.addFilter(_DropRunWarnings())
    root.addHandler(handler)
    root.setLevel(others)
    logging.getLogger(OWN_LOGGER).setLevel(own)


def hoist_global_flags(args: list[str]) -> list[str]:
    """Move -v/-vv/--verbose/-q/--quiet found after the subcommand to the front, up to a ``--``."""
    args = list(args)
    end = args.index("--") if "--" in args else len(args)
    flags = [a for a in args[:end] if a in GLOBAL_FLAGS or a in _VERBOSE_SHORT]
    rest = [a for a in args[:end] if not (a in GLOBAL_FLAGS or a in _VERBOSE_SHORT)]
    return flags + rest + args[end:]

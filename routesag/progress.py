"""Progress of a run on the terminal: a bar over tension sections, shown only to a person watching.

The bar goes to stderr, and only when stderr is a terminal (never into a log file or a pipe). Log lines
written while it is shown are printed above it, so neither garbles the other. Timing lines per stage and per
section are logged by the runner (``routesag.pipeline``) at INFO level on the ``routesag`` logger (``-v``).
"""
from __future__ import annotations

import contextlib
import os
import sys

#: Terminal size assumed when the terminal does not tell it (a pseudo-terminal of 0 x 0): tqdm hides a bar on
#: a terminal of 0 rows.
FALLBACK_COLUMNS, FALLBACK_ROWS = 80, 24


class SectionBar:
    """``on_section(section_id, done, total)`` callback drawing a tqdm bar; a new bar at each ``done`` 0 (a run's
    start, so a batch shows one bar per project)."""

    def __init__(self, stream):
        self._stream = stream
        self._bar = None

    def __call__(self, section_id: str, done: int, total: int) -> None:
        from tqdm import tqdm

        if self._bar is None or done == 0:
            self.close()
            sized = terminal_columns(self._stream) > 0
            self._bar = tqdm(total=total, file=self._stream, unit="section", desc="tension sections", leave=False,
                             dynamic_ncols=sized, ncols=None if sized else FALLBACK_COLUMNS,
                             nrows=None if sized else FALLBACK_ROWS)
        if done:
            self._bar.set_postfix_str(section_id, refresh=False)
            self._bar.update(1)
        if done == total:
            self.close()

    def close(self) -> None:
        if self._bar is not None:
            self._bar.close()
            self._bar = None


def terminal_columns(stream) -> int:
    """Width of the terminal behind ``stream``; 0 when unknown."""
    try:
        return os.get_terminal_size(stream.fileno()).columns
    except (AttributeError, OSError, ValueError):
        return 0


def shows_bar(stream, quiet: bool) -> bool:
    """A bar only for a person: not with -q, and only when the stream is a terminal."""
    isatty = getattr(stream, "isatty", None)
    return not quiet and bool(isatty and isatty())


@contextlib.contextmanager
def section_progress(quiet: bool = False, stream=None):
    """Yield the ``on_section`` callback for a run: a bar on ``stream`` (default stderr) or None.

    While the bar is shown, console log lines go through tqdm so they print above it.
    """
    stream = sys.stderr if stream is None else stream
    if not shows_bar(stream, quiet):
        yield None
        return
    from tqdm.contrib.logging import logging_redirect_tqdm

    bar = SectionBar(stream)
    try:
        with logging_redirect_tqdm():
            yield bar
    finally:
        bar.close()

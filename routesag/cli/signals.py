"""SIGTERM handled like Ctrl-C, so a run stopped by a service manager or `kill` cleans up after itself."""
from __future__ import annotations

import contextlib
import signal
import threading


def _interrupt(signum, frame):
    raise KeyboardInterrupt(f"stopped by signal {signum}")


@contextlib.contextmanager
def terminate_as_interrupt():
    """Within the block SIGTERM raises KeyboardInterrupt (the earlier handler comes back after)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = signal.signal(signal.SIGTERM, _interrupt)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)

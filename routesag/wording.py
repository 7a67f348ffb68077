"""Small helpers for messages people read."""


def plural(count: int, noun: str) -> str:
    """``1 span``, ``2 spans``."""
    return f"{count} {noun}{'' if count == 1 else 's'}"

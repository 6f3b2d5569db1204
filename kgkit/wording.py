"""Small helpers for the words of kgkit's output."""

from __future__ import annotations

__all__ = ["counted"]


def counted(n: int, noun: str, plural: str | None = None) -> str:
    """``n`` and the noun, singular for one: ``counted(1, "error") == "1 error"``.

    >>> counted(2, "cycle link"), counted(1, "cycle link"), counted(1234, "entity", "entities")
    ('2 cycle links', '1 cycle link', '1,234 entities')
    """
    return f"{n:,} {noun if n == 1 else (plural or noun + 's')}"

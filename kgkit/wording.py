"""Small helpers for the words of kgkit's output."""

from __future__ import annotations

__all__ = ["counted", "topic_text"]


def counted(n: int, noun: str, plural: str | None = None) -> str:
    """``n`` and the noun, singular for one: ``counted(1, "error") == "1 error"``.

    >>> counted(2, "cycle link"), counted(1, "cycle link"), counted(1234, "entity", "entities")
    ('2 cycle links', '1 cycle link', '1,234 entities')
    """
    return f"{n:,} {noun if n == 1 else (plural or noun + 's')}"


def topic_text(label: str | None, topic_id: str) -> str:
    """How a person sees a topic in kgkit's output: its label beside its id.

    >>> topic_text("canoe polo", "canoe-polo"), topic_text(None, "n0042")
    ('canoe polo (canoe-polo)', 'n0042 (no label)')
    """
    return f"{label} ({topic_id})" if label else f"{topic_id} (no label)"

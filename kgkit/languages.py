"""Language tags and language ranges: the one home for their syntax and matching.

A *language tag* is what a literal carries (``en``, ``en-GB``, ``de-1901``); kgkit
accepts the BCP 47 shape (RFC 5646 section 2.1: a primary subtag of 1-8 letters,
then subtags of 1-8 letters or digits) without checking subtags against the IANA
registry, since graphs carry private and unregistered tags. The empty tag ``""``
means an untagged literal where a caller allows it.

A *language range* (RFC 4647 section 2.1) selects tags: ``en`` matches ``en`` and
``en-GB``; ``*`` matches every tag; ``""`` matches untagged literals only.
Matching is case-insensitive on both sides (RFC 4647 section 3.3.1; RFC 5646
section 2.1.1: tags are case-insensitive).

(``langcodes`` was measured for this: its validity check consults the registry,
refusing tags such as ``xx`` that dumps do carry, and its matching is by
language distance, not RFC 4647 filtering; so the checks stay these few lines.)
"""

from __future__ import annotations

import functools
import re
from collections.abc import Iterable

__all__ = ["LANGUAGE_TAG", "is_language_tag", "language_matches"]

#: the shape of a language tag, as a regular expression (no anchors)
LANGUAGE_TAG = r"[A-Za-z]{1,8}(?:-[A-Za-z0-9]{1,8})*"
_TAG = re.compile(LANGUAGE_TAG)


def is_language_tag(text: object, allow_empty: bool = False) -> bool:
    """True for a string shaped like a language tag (``""`` too with ``allow_empty``).

    >>> is_language_tag("en-GB"), is_language_tag("en-"), is_language_tag("")
    (True, False, False)
    >>> is_language_tag("", allow_empty=True)
    True
    """
    if not isinstance(text, str):
        return False
    if text == "":
        return allow_empty
    return _TAG.fullmatch(text) is not None


@functools.lru_cache(maxsize=4096)
def _matches(tag: str, ranges: tuple[str, ...]) -> bool:
    tag = tag.lower()
    for r in ranges:
        r = r.lower()
        if r == tag or (r == "*" and tag) or (r and r != "*" and tag.startswith(r + "-")):
            return True
    return False


def language_matches(tag: str, ranges: Iterable[str]) -> bool:
    """RFC 4647 section 3.3.1 basic filtering: does ``tag`` fall in one of ``ranges``?

    >>> language_matches("en-GB", ["en"]), language_matches("EN", ["en-gb"])
    (True, False)
    >>> language_matches("eng", ["en"]), language_matches("de", ["*"]), language_matches("", ["*"])
    (False, True, False)
    >>> language_matches("", [""]), language_matches("en", [""])
    (True, False)
    """
    return _matches(tag, ranges if type(ranges) is tuple else tuple(ranges))

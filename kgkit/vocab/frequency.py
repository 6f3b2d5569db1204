"""Common-word risk: how often a name is used in general text of its language.

A name that is an everyday word ("round", "roll", "track") makes false hits when
annotators match it in text, however right it is for its topic. Its frequency in
general use comes from ``wordfreq`` (Robyn Speer. (2022). rspeer/wordfreq: v3.0 (v3.0.2). Zenodo.
https://doi.org/10.5281/zenodo.7199437, the citation its README asks for), on the
Zipf scale proposed by Marc Brysbaert: ``log10`` of the uses per billion words, so
a word used once per million words scores 3. A name
of several words gets wordfreq's combined frequency of its words.

wordfreq ships its word lists inside the package; nothing is downloaded. Languages
it has no list for, and those whose tokeniser needs a package that is not
installed (Chinese, Japanese, Korean), get no frequency: ``None``.

>>> zipf("the", "en") > 7
True
>>> zipf("round", "en-GB") == zipf("round", "en")
True
>>> zipf("round", ""), zipf("round", "xx")
(None, None)
"""

from __future__ import annotations

import functools
from collections.abc import Iterable

__all__ = ["common_words", "is_rated", "zipf"]


@functools.lru_cache(maxsize=64)
def is_rated(language: str) -> bool:
    """True when wordfreq can rate names tagged ``language`` (by its primary subtag)."""
    primary = language.split("-", 1)[0].lower()
    if not primary:
        return False
    import wordfreq

    if primary not in wordfreq.available_languages():
        return False
    try:
        wordfreq.zipf_frequency("a", primary)
    except (ImportError, LookupError):  # a tokeniser package is missing
        return False
    return True


@functools.lru_cache(maxsize=262144)
def zipf(name: str, language: str) -> float | None:
    """``wordfreq.zipf_frequency(name, language)`` by primary subtag; None when unrated."""
    if not is_rated(language):
        return None
    import wordfreq

    return wordfreq.zipf_frequency(name, language.split("-", 1)[0].lower())


def common_words(rows: Iterable[tuple[str, str, str, str]], min_zipf: float) -> list[dict]:
    """Every name at or above ``min_zipf``: one entry per (alias, language), with its topics.

    ``rows`` are (alias, topic, language, kind). Entries are sorted by frequency
    (highest first), then alias and language; each has ``alias``, ``language``,
    ``zipf``, ``topics`` and ``kinds``.

    >>> rows = [("round", "t1", "en", "alias"), ("round", "t2", "en", "preferred"),
    ...         ("canoe polo", "t3", "en", "preferred")]
    >>> [(e["alias"], e["topics"]) for e in common_words(rows, 4.0)]
    [('round', ['t1', 't2'])]
    """
    found: dict[tuple[str, str], tuple[float, set[str], set[str]]] = {}
    for alias, topic, language, kind in rows:
        entry = found.get((alias, language))
        if entry is None:
            z = zipf(alias, language)
            if z is None or z < min_zipf:
                continue
            entry = found[(alias, language)] = (z, set(), set())
        entry[1].add(topic)
        entry[2].add(kind)
    out = [
        {
            "alias": alias,
            "kinds": sorted(kinds),
            "language": language,
            "topics": sorted(topics),
            "zipf": z,
        }
        for (alias, language), (z, topics, kinds) in found.items()
    ]
    out.sort(key=lambda e: (-e["zipf"], e["alias"], e["language"]))
    return out

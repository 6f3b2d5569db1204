"""Labels and aliases: normalisation, match keys, preferred labels, drop rules, ambiguity.

>>> match_key("  Kayak\\u00a0 POLO ")
'kayak polo'
>>> normalize_alias("\\ufb01shing  nets")
'fishing nets'
"""

from __future__ import annotations

import functools
import unicodedata
from collections.abc import Iterable

from kgkit.vocab.spec import AliasRules, LanguageRules

__all__ = [
    "clean_aliases",
    "choose_labels",
    "fold_space",
    "is_numeric_only",
    "key_cache",
    "lang_matches",
    "match_key",
    "normalize_alias",
    "resolve_ambiguity",
]


def fold_space(text: str) -> str:
    """Whitespace runs (``str.isspace``, as ``\\s`` in ``re``) folded to one space, stripped."""
    return " ".join(text.split())


def normalize_alias(text: str) -> str:
    """Unicode NFKC, then whitespace folded: the form an alias is written in."""
    return fold_space(unicodedata.normalize("NFKC", text))


def match_key(text: str) -> str:
    """The key two names are compared by: NFKC, whitespace folded, ``str.casefold()``."""
    return normalize_alias(text).casefold()


def key_cache() -> dict[str, str]:
    """A dict that computes and remembers match keys: ``keys[text]``."""

    class _Keys(dict):
        def __missing__(self, text: str) -> str:
            key = self[text] = match_key(text)
            return key

    return _Keys()


def is_numeric_only(text: str) -> bool:
    """True when the text has no letter at all (digits, punctuation, symbols, spaces)."""
    return not any(unicodedata.category(ch).startswith("L") for ch in text)


def lang_matches(tag: str, ranges: Iterable[str]) -> bool:
    """RFC 4647 basic filtering: ``en`` matches ``en`` and ``en-GB``; ``""`` only untagged."""
    return any(tag == r or (r and tag.startswith(r + "-")) for r in ranges)


class _LanguageFilter:
    """Which language tags the rules keep, remembered per tag (rules hash slowly)."""

    __slots__ = ("_kept", "_usable", "every", "rules")

    def __init__(self, rules: LanguageRules):
        self.rules = rules
        self.every = rules.kept is None and not rules.fallback
        self._kept: dict[str, bool] = {}
        self._usable: dict[str, bool] = {}

    def kept(self, tag: str) -> bool:
        """Untagged, or a language the spec keeps (all when it names none)."""
        v = self._kept.get(tag)
        if v is None:
            k = self.rules.kept
            v = self._kept[tag] = tag == "" or k is None or lang_matches(tag, k)
        return v

    def usable(self, tag: str) -> bool:
        """Kept, or a fallback language that may lend its labels."""
        v = self._usable.get(tag)
        if v is None:
            v = self._usable[tag] = self.kept(tag) or lang_matches(tag, self.rules.fallback)
        return v


@functools.lru_cache(maxsize=16)
def _filter(rules: LanguageRules) -> _LanguageFilter:
    return _LanguageFilter(rules)


def choose_labels(
    labels: Iterable[tuple[str, str, int]],
    rules: LanguageRules,
    override: dict[str, str] | None = None,
) -> tuple[dict[str, str], dict[str, str], list[tuple[str, str]]]:
    """One preferred label per language.

    ``labels`` are (language, text, rank) with rank the position of the label
    predicate in the profile (lower wins); ties go to the smallest text. A curated
    ``override`` wins over both. For a required or optional language without a
    label, the first language of ``rules.fallback`` that has one lends it.

    Returns (preferred: lang -> text, borrowed: lang -> language lent from,
    others: the (lang, text) labels not chosen, which become aliases).
    """
    lf = _filter(rules)
    every = lf.every
    by_lang: dict[str, list[tuple[int, str]]] = {}
    for lang, text, rank in labels:
        if every or lf.usable(lang):
            text = " ".join(text.split())
            if text:
                if lang in by_lang:
                    by_lang[lang].append((rank, text))
                else:
                    by_lang[lang] = [(rank, text)]
    pref: dict[str, str] = {}
    others: list[tuple[str, str]] = []
    for lang in sorted(by_lang):
        if not every and not lf.kept(lang):
            continue  # a fallback language only lends its labels
        ranked = by_lang[lang]
        if len(ranked) == 1:
            chosen = ranked[0][1]
        else:
            ranked = sorted(set(ranked))
            chosen = ranked[0][1]
        if override and lang in override:
            chosen = override[lang]
        pref[lang] = chosen
        if len(ranked) > 1 or chosen != ranked[0][1]:
            others.extend((lang, t) for _, t in ranked if t != chosen)
    if override:
        for lang, text in sorted(override.items()):
            pref.setdefault(lang, text)
    borrowed: dict[str, str] = {}
    if rules.fallback and rules.kept:
        for lang in rules.kept:
            if lang == "" or any(lang_matches(x, [lang]) for x in pref):
                continue
            for fb in rules.fallback:
                hit = sorted(x for x in by_lang if lang_matches(x, [fb]))
                if hit:
                    pref[lang] = sorted(set(by_lang[hit[0]]))[0][1]
                    borrowed[lang] = hit[0]
                    break
    if borrowed:
        pref = dict(sorted(pref.items()))
    return pref, borrowed, others


@functools.lru_cache(maxsize=64)
def _stop_keys(stop: tuple[str, ...]) -> frozenset[str]:
    return frozenset(match_key(s) for s in stop)


def clean_aliases(
    topic: str,
    pref: dict[str, str],
    aliases: Iterable[tuple[str, str, str]],
    rules: AliasRules,
    languages: LanguageRules,
    removed: set[tuple[str, str]] | None = None,
    keys: dict[str, str] | None = None,
) -> tuple[dict[str, list[str]], list[dict]]:
    """Normalise and filter the aliases of one topic.

    ``aliases`` are (language, text, kind). Always removed: empty aliases, aliases
    equal (by match key) to the preferred label of their language, and duplicates.
    Opt-in: too short, no letter at all, stop-listed, language not kept. ``removed``
    holds (language, match key) pairs taken out by curation (language "*": any).

    Returns (aliases: lang -> sorted list, dropped: report entries).
    """
    keys = key_cache() if keys is None else keys
    stop = _stop_keys(tuple(rules.stop))
    lf = _filter(languages)
    pref_keys = {lang: keys[text] for lang, text in pref.items()}
    kept: dict[str, dict[str, str]] = {}
    dropped = []

    def drop(lang, text, reason):
        dropped.append({"alias": text, "language": lang, "reason": reason, "topic": topic})

    for lang, raw, kind in sorted(set(aliases)):
        if kind == "hidden" and not rules.hidden:
            continue
        text = normalize_alias(raw)
        key = text.casefold()
        if not text:
            drop(lang, raw, "empty")
        elif not lf.every and not lf.kept(lang):
            drop(lang, text, "language-not-kept")
        elif removed and ((lang, key) in removed or ("*", key) in removed):
            drop(lang, text, "removed-by-curation")
        elif pref_keys.get(lang) == key:
            drop(lang, text, "duplicate-of-label")
        elif key in kept.get(lang, {}):
            drop(lang, text, "duplicate")
        elif rules.min_length and len(text) < rules.min_length:
            drop(lang, text, "too-short")
        elif rules.drop_numeric and is_numeric_only(text):
            drop(lang, text, "digits-and-punctuation-only")
        elif key in stop:
            drop(lang, text, "stop-listed")
        else:
            kept.setdefault(lang, {})[key] = text
    return {lang: sorted(v.values()) for lang, v in sorted(kept.items())}, dropped


def resolve_ambiguity(
    names: dict[str, tuple[dict[str, str], dict[str, list[str]]]],
    policy: str,
    keys: dict[str, str] | None = None,
) -> tuple[list[dict], list[dict], set[tuple[str, str]]]:
    """Find match keys shared by several topics and apply the spec's ``policy``.

    ``names``: topic -> (preferred labels, aliases). Policies: ``keep`` changes
    nothing; ``preferred-only`` removes the key's aliases everywhere (it stays
    where it is a preferred label); ``drop`` removes its aliases and leaves its
    preferred labels out of the lexicon (they stay the topics' labels).

    Aliases are removed from ``names`` in place. Returns (ambiguous report,
    dropped aliases, (topic, key) pairs whose preferred rows leave the lexicon).
    """
    keys = key_cache() if keys is None else keys
    owners: dict[str, set[str]] = {}
    for topic, (pref, aliases) in names.items():
        for text in pref.values():
            owners.setdefault(keys[text], set()).add(topic)
        for texts in aliases.values():
            for text in texts:
                owners.setdefault(keys[text], set()).add(topic)
    action = {"keep": "kept", "drop": "dropped", "preferred-only": "kept-as-preferred-only"}[policy]
    report, dropped, unlisted = [], [], set()
    shared = {k: sorted(t) for k, t in owners.items() if len(t) > 1}
    for key in sorted(shared):
        report.append({"action": action, "key": key, "topics": shared[key]})
        if policy == "keep":
            continue
        for topic in shared[key]:
            pref, aliases = names[topic]
            for lang in list(aliases):
                keep = [a for a in aliases[lang] if keys[a] != key]
                for a in aliases[lang]:
                    if keys[a] == key:
                        dropped.append(
                            {"alias": a, "language": lang, "reason": "ambiguous", "topic": topic}
                        )
                if keep:
                    aliases[lang] = keep
                else:
                    del aliases[lang]
            if policy == "drop" and any(keys[t] == key for t in pref.values()):
                unlisted.add((topic, key))
    return report, dropped, unlisted

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
from dataclasses import dataclass

from kgkit.languages import language_matches
from kgkit.vocab.spec import AliasRules, LanguageRules

__all__ = [
    "INFLECTED",
    "Settlement",
    "add_inflected_forms",
    "clean_aliases",
    "choose_labels",
    "drop_common_aliases",
    "fold_space",
    "is_from_alias",
    "is_numeric_only",
    "key_cache",
    "lang_matches",
    "match_key",
    "merge_ambiguous",
    "normalize_alias",
    "resolve_ambiguity",
    "settle_names",
]

#: the ``kind`` of a lexicon row made from another name (a plural of it)
INFLECTED = "inflected"


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
    """RFC 4647 basic filtering: ``en`` matches ``en`` and ``en-GB``; ``""`` only untagged
    (:func:`kgkit.languages.language_matches`, the one home of this test)."""
    return language_matches(tag, ranges)


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
    aliases: Iterable[tuple[str, str, str]] = (),
) -> tuple[dict[str, str], dict[str, str], list[tuple[str, str]]]:
    """One preferred label per language.

    ``labels`` are (language, text, rank) with rank the position of the label
    predicate in the profile (lower wins); ties go to the smallest text. A curated
    ``override`` wins over both. For a required or optional language without a
    label, an alias in that language (``aliases``: (language, text, kind); hidden
    ones never) becomes its label, the smallest text first; only a language with
    neither borrows, from the first language of ``rules.fallback`` that has a label.

    Returns (preferred: lang -> text, borrowed: lang -> language lent from,
    others: the (lang, text) labels not chosen, which become aliases). A label
    taken from an alias is lent by its own language: ``borrowed[lang] == lang``
    (:func:`is_from_alias`).

    >>> rules = LanguageRules(required=("fr",), fallback=("en",))
    >>> choose_labels([("en", "Berne", 0)], rules, aliases=[("fr", "Berne", "alias")])[:2]
    ({'fr': 'Berne'}, {'fr': 'fr'})
    >>> choose_labels([("en", "Berne", 0)], rules)[:2]
    ({'fr': 'Berne'}, {'fr': 'en'})
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
    if aliases and rules.kept:
        for lang in rules.kept:
            if lang == "" or any(lang_matches(x, [lang]) for x in pref):
                continue
            same = sorted(
                (tag, " ".join(text.split()))
                for tag, text, kind in aliases
                if kind != "hidden" and lang_matches(tag, [lang]) and text.strip()
            )
            if same:
                tag, text = same[0]
                pref[tag] = text
                borrowed[tag] = tag
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


def is_from_alias(lang: str, lent_by: str) -> bool:
    """True for a preferred label :func:`choose_labels` took from an alias of its own
    language (``borrowed[lang] == lang``), False for one lent by another language."""
    return lang == lent_by


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
    settled: Iterable[str] = (),
    unlisted: Iterable[tuple[str, str]] = (),
) -> tuple[list[dict], list[dict], set[tuple[str, str]]]:
    """Find match keys shared by several topics and apply the spec's ``policy``.

    ``names``: topic -> (preferred labels, aliases). Policies: ``keep`` changes
    nothing; ``preferred-only`` removes the key's aliases everywhere (it stays
    where it is a preferred label; a key that is nobody's preferred label leaves
    the lexicon entirely, reported as ``removed`` with that reason); ``drop``
    removes its aliases and leaves its preferred labels out of the lexicon (they
    stay the topics' labels). Keys the curation ``settled`` (see
    :func:`settle_names`) are reported as such and left as they are; preferred
    labels in ``unlisted`` (topic, key) are not names in the lexicon.

    Aliases are removed from ``names`` in place. Returns (ambiguous report,
    dropped aliases, (topic, key) pairs whose preferred rows leave the lexicon).
    """
    keys = key_cache() if keys is None else keys
    settled = frozenset(settled)
    unlisted = frozenset(unlisted)
    owners: dict[str, set[str]] = {}
    preferred: dict[str, set[str]] = {}
    for topic, (pref, aliases) in names.items():
        for text in pref.values():
            key = keys[text]
            if unlisted and (topic, key) in unlisted:
                continue
            owners.setdefault(key, set()).add(topic)
            preferred.setdefault(key, set()).add(topic)
        for texts in aliases.values():
            for text in texts:
                owners.setdefault(keys[text], set()).add(topic)
    action = {"keep": "kept", "drop": "dropped", "preferred-only": "kept-as-preferred-only"}[policy]
    report, dropped, unlisted = [], [], set()
    shared = {k: sorted(t) for k, t in owners.items() if len(t) > 1}
    for key in sorted(shared):
        if key in settled:
            report.append({"action": "settled-by-curation", "key": key, "topics": shared[key]})
            continue
        if policy == "preferred-only" and key not in preferred:
            report.append(
                {
                    "action": "removed",
                    "key": key,
                    "reason": "no topic has it as its preferred label",
                    "topics": shared[key],
                }
            )
        else:
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


def drop_common_aliases(
    names: dict[str, tuple[dict[str, str], dict[str, list[str]]]],
    min_zipf: float,
) -> list[dict]:
    """Remove every alias whose frequency in general use is ``min_zipf`` or more.

    ``names``: topic -> (preferred labels, aliases), aliases removed in place.
    Preferred labels are never removed (that stays a decision for the owner).
    Returns the dropped aliases with reason ``common-word`` and their ``zipf``
    (see :mod:`kgkit.vocab.frequency`).
    """
    from kgkit.vocab.frequency import zipf

    dropped = []
    for topic, (_pref, aliases) in names.items():
        for lang in list(aliases):
            keep = []
            for text in aliases[lang]:
                z = zipf(text, lang)
                if z is not None and z >= min_zipf:
                    dropped.append(
                        {
                            "alias": text,
                            "language": lang,
                            "reason": "common-word",
                            "topic": topic,
                            "zipf": z,
                        }
                    )
                else:
                    keep.append(text)
            if keep:
                aliases[lang] = keep
            else:
                del aliases[lang]
    return dropped


@dataclass(frozen=True)
class Settlement:
    """A curation edit that settles a shared name: it stays a name of ``keep`` only.

    ``edit``: the edit as reported (``Edit.describe()``); ``key``: the name's match
    key; ``language``: only names in this language, or None for any.
    """

    edit: dict
    key: str
    keep: frozenset[str]
    language: str | None = None


def settle_names(
    names: dict[str, tuple[dict[str, str], dict[str, list[str]]]],
    settlements: Iterable[Settlement],
    keys: dict[str, str] | None = None,
) -> tuple[list[dict], list[dict], set[tuple[str, str]], set[str]]:
    """Apply the curation's settlements of shared names, in order.

    For each, every other topic that has the name loses it: its aliases are removed
    from ``names`` (in place) and, where it is the topic's preferred label, that row
    leaves the lexicon (the label stays the topic's label). A settlement is stale
    when the name is no longer shared or a kept topic does not have it.

    Returns (stale: the edits with a ``reason``, dropped aliases, (topic, key)
    preferred labels unlisted, settled keys).
    """
    keys = key_cache() if keys is None else keys
    stale: list[dict] = []
    dropped: list[dict] = []
    unlisted: set[tuple[str, str]] = set()
    settled: set[str] = set()
    for st in settlements:
        key, lang = st.key, st.language

        def has(topic: str, key=key, lang=lang) -> bool:
            pref, aliases = names[topic]
            if (topic, key) in unlisted:
                pref = {}
            return any(
                keys[t] == key for lg, t in pref.items() if lang is None or lg == lang
            ) or any(
                keys[t] == key
                for lg, ts in aliases.items()
                if lang is None or lg == lang
                for t in ts
            )

        owners = {t for t in names if has(t)}
        missing = sorted(st.keep - owners)
        if missing:
            stale.append({**st.edit, "reason": f"topic {missing[0]!r} does not have this name"})
            continue
        if len(owners) < 2:
            stale.append({**st.edit, "reason": "the name is no longer shared"})
            continue
        settled.add(key)
        for topic in sorted(owners - st.keep):
            pref, aliases = names[topic]
            for lg, text in pref.items():
                if keys[text] == key and (lang is None or lg == lang):
                    unlisted.add((topic, key))
            for lg in list(aliases):
                if lang is not None and lg != lang:
                    continue
                keep = [a for a in aliases[lg] if keys[a] != key]
                dropped.extend(
                    {
                        "alias": a,
                        "language": lg,
                        "reason": f"settled-by-curation:edit-{st.edit.get('edit')}",
                        "topic": topic,
                    }
                    for a in aliases[lg]
                    if keys[a] == key
                )
                if keep:
                    aliases[lg] = keep
                else:
                    del aliases[lg]
    return stale, dropped, unlisted, settled


def add_inflected_forms(
    names: dict[str, tuple[dict[str, str], dict[str, list[str]]]],
    languages: Iterable[str],
    policy: str,
    keys: dict[str, str] | None = None,
    unlisted: Iterable[tuple[str, str]] = (),
    min_zipf: float | None = None,
) -> tuple[dict[str, list[tuple[str, str, str]]], list[dict], list[dict]]:
    """The inflected forms of every name, settled like any name (run it last).

    ``names``: topic -> (preferred labels, aliases) after every other alias rule;
    ``languages``: the spec's ``aliases.inflected_forms`` (a name tagged ``en-GB``
    is served by ``en``). A form never overrides a name the graph or the curation
    gives: a form equal to one of the topic's own names is not added, and a form
    equal to another topic's name, or to another topic's form, makes a shared key
    that the ambiguity ``policy`` settles for the forms alone (``keep``: the form
    stays, sharing the key; otherwise the form is dropped and the given names stay
    as they are). With ``min_zipf`` a form that common is dropped as well.

    Returns (forms: topic -> [(language, form, the name it came from)], dropped
    forms, ambiguous report entries for the shared keys forms take part in, to
    merge with :func:`merge_ambiguous`).
    """
    from kgkit.vocab.forms import form_language, inflected_forms

    keys = key_cache() if keys is None else keys
    wanted = {x.split("-", 1)[0].lower() for x in languages}
    unlisted = frozenset(unlisted)
    given: dict[str, set[str]] = {}
    own: dict[str, set[str]] = {}
    for topic, (pref, aliases) in names.items():
        mine = own[topic] = set()
        for text in pref.values():
            mine.add(keys[text])
            if (topic, keys[text]) not in unlisted:
                given.setdefault(keys[text], set()).add(topic)
        for texts in aliases.values():
            for text in texts:
                mine.add(keys[text])
                given.setdefault(keys[text], set()).add(topic)
    made: dict[str, dict[tuple[str, str], tuple[str, str, str]]] = {}
    for topic, (pref, aliases) in names.items():
        sources = [(lang, t) for lang, t in pref.items() if (topic, keys[t]) not in unlisted]
        sources += [(lang, text) for lang, texts in aliases.items() for text in texts]
        for lang, text in sorted(sources):
            if form_language(lang) not in wanted:
                continue
            for form in inflected_forms(text, lang):
                key = keys[form]
                if key in own[topic]:
                    continue  # the graph or the curation gives this name already
                made.setdefault(topic, {}).setdefault((lang, key), (lang, form, text))
    form_owners: dict[str, set[str]] = {}
    for topic, forms in made.items():
        for _lang, key in forms:
            form_owners.setdefault(key, set()).add(topic)
    dropped: list[dict] = []
    report: list[dict] = []
    shared_keys: set[str] = set()
    for key in sorted(form_owners):
        topics = form_owners[key] | given.get(key, set())
        if len(topics) > 1:
            shared_keys.add(key)
            action = "kept" if policy == "keep" else "forms-dropped"
            report.append({"action": action, "key": key, "topics": sorted(topics)})
    out: dict[str, list[tuple[str, str, str]]] = {}
    if min_zipf is not None:
        from kgkit.vocab.frequency import zipf
    for topic in sorted(made):
        kept = []
        for (lang, key), (_lg, form, source) in sorted(made[topic].items()):
            z = zipf(form, lang) if min_zipf is not None else None
            if z is not None and z >= min_zipf:
                reason = "common-word"
            elif key in shared_keys and policy != "keep":
                reason = "ambiguous"
            else:
                kept.append((lang, form, source))
                continue
            entry = {
                "alias": form,
                "kind": INFLECTED,
                "language": lang,
                "reason": reason,
                "source": source,
                "topic": topic,
            }
            if z is not None:
                entry["zipf"] = z
            dropped.append(entry)
        if kept:
            out[topic] = kept
    return out, dropped, report


def merge_ambiguous(report: list[dict], more: Iterable[dict]) -> list[dict]:
    """The ambiguous-key report with ``more`` entries: a key already listed gains the
    other entry's topics and keeps its action; the result is sorted by key."""
    by_key = {e["key"]: e for e in report}
    for e in more:
        if e["key"] in by_key:
            old = by_key[e["key"]]
            old["topics"] = sorted(set(old["topics"]) | set(e["topics"]))
        else:
            by_key[e["key"]] = e
    return [by_key[k] for k in sorted(by_key)]

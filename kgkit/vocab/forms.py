"""Inflected forms of a vocabulary's names: what an annotator must match besides the name.

Only English plurals for now. A name's *head noun* takes the plural; the rest of
the name stays as written: "hot dog" -> "hot dogs", "chief of staff" -> "chiefs of
staff", "attorney general" -> "attorneys general", "mother-in-law" ->
"mothers-in-law". The word forms come from ``lemminflect`` (its lexicon, built
from the Automatically Generated Inflection Database and the SPECIALIST lexicon,
with rules for words it does not list). Measured before choosing (see
docs/lexicon.md): it knows uncountable nouns ("hockey", "news" get no plural) and
more irregular plurals than ``inflect`` or ``pluralizer``. A form that the rules
make is kept only when the word is attested in ``wordfreq``'s English word list,
and so is any second form the lexicon lists ("area" -> "areae" is not kept); a
name that is already plural, an acronym or a capitalised word the lexicon does not
know (a proper name: "Paris", "New York") gets no form.

Other languages: ``simplemma`` ships lemma dictionaries for many, but read
backwards (lemma -> forms) they give every form of every part of speech, gender
forms and misspellings; measured at 22-28 % forms unknown to ``wordfreq`` in
German, French and Spanish. No form is better than a wrong one, so they are
refused in the spec until a library serves them well.

>>> plural_forms("mouse")
['mice']
>>> plural_forms("hot dog")
['hot dogs']
>>> plural_forms("attorney general")
['attorneys general']
>>> plural_forms("hockey")
[]
"""

from __future__ import annotations

import functools

__all__ = [
    "FORM_LANGUAGES",
    "form_language",
    "head_index",
    "inflected_forms",
    "plural_forms",
]

#: languages (primary subtags) whose forms kgkit can make
FORM_LANGUAGES = ("en",)

# A preposition or linking word after the head noun: "chief of staff",
# "mother-in-law", "lady-in-waiting", "aide-de-camp" (common practice, no source;
# the forms are checked against WordNet 3.0's noun exception list in the tests).
_LINKS = frozenset(
    [
        "of",
        "in",
        "at",
        "on",
        "to",
        "for",
        "with",
        "from",
        "by",
        "under",
        "over",
        "de",
        "du",
        "des",
        "la",
        "d'",
        "da",
        "del",
        "à",
        "au",
    ]
)
# Adjectives that follow their noun: "attorney general", "court martial",
# "mother superior", "heir apparent" (common practice, no source).
_POSTPOSITIVE = frozenset(
    [
        "general",
        "martial",
        "superior",
        "apparent",
        "presumptive",
        "laureate",
        "politic",
        "designate",
        "elect",
        "royal",
        "plenipotentiary",
        "extraordinary",
        "bachelor",
        "templar",
    ]
)
_COORDINATED = frozenset(("and", "or", "&"))
# Particles of phrasal nouns: "runner-up", "passer-by", "hanger-on" (common practice).
_PARTICLES = frozenset(["up", "by", "on", "in", "over", "out", "off", "down", "away", "back"])


def form_language(tag: str) -> str | None:
    """The language (primary subtag) whose forms apply to names tagged ``tag``, if any.

    >>> form_language("en-GB"), form_language("de"), form_language("")
    ('en', None, None)
    """
    primary = tag.split("-", 1)[0].lower()
    return primary if primary in FORM_LANGUAGES else None


def head_index(words: list[str]) -> int:
    """The position of the head noun among the words of an English noun phrase.

    >>> head_index(["chief", "of", "staff"]), head_index(["hot", "dog"])
    (0, 1)
    >>> head_index(["judge", "advocate", "general"])
    1
    """
    lower = [w.lower() for w in words]
    for i, w in enumerate(lower):
        if i > 0 and w in _LINKS:
            return i - 1
    if len(words) > 1 and lower[-1] in _POSTPOSITIVE | _PARTICLES:
        return len(words) - 2
    return len(words) - 1


@functools.lru_cache(maxsize=1)
def _libs():
    import lemminflect
    import wordfreq

    return lemminflect, wordfreq


@functools.lru_cache(maxsize=65536)
def _word_plurals(word: str) -> tuple[str, ...]:
    """Plural forms of one lower-case English noun (none when it has none or is plural)."""
    lemminflect, wordfreq = _libs()

    def attested(x: str) -> bool:
        return wordfreq.zipf_frequency(x, "en") > 0

    listed = lemminflect.getAllInflections(word, upos="NOUN").get("NNS")
    if listed:
        first, *rest = listed
        out = [first] + [x for x in rest if attested(x)]
        return tuple(dict.fromkeys(x for x in out if x != word))
    # not a noun lemma of the lexicon: already a plural form ("games", "data")?
    lemmas = lemminflect.getLemma(word, upos="NOUN", lemmatize_oov=False)
    if lemmas and word not in lemmas:
        return ()
    if lemminflect.getAllInflections(word):  # listed, but not as a noun ("above")
        return ()
    made = lemminflect.getInflection(word, "NNS", inflect_oov=True) or ()
    return tuple(x for x in dict.fromkeys(made) if x != word and attested(x))


def _cased_like(form: str, word: str) -> str:
    if word[:1].isupper() and word[1:].islower():
        return form[:1].upper() + form[1:]
    return form


def _plural_word(word: str) -> tuple[str, ...]:
    core = word
    if not core.isalpha() or (len(core) > 1 and core.isupper()):
        return ()  # digits, punctuation, acronyms: leave them alone
    lower = core.lower()
    if core != lower and not core[1:].islower():
        return ()  # mixed case ("iPod", "McDonald"): a name, not a noun
    if core != lower and not _libs()[0].getAllInflections(lower, upos="NOUN"):
        return ()  # capitalised and unknown as a noun: a proper name
    return tuple(_cased_like(f, core) for f in _word_plurals(lower))


def plural_forms(name: str) -> list[str]:
    """The plural forms of an English noun or noun phrase ``name``, in the library's order.

    Words are split on spaces and, inside a word, on hyphens; the head noun
    (:func:`head_index`) takes the plural. Names without a plural give ``[]``.
    """
    words = name.split(" ")
    if not all(words) or _COORDINATED & {w.lower() for w in words}:
        return []  # "fish and chips", "movers and shakers": which word? none, to be safe
    i = head_index(words)
    if "-" in words[i]:
        parts = words[i].split("-")
        if all(parts):
            j = head_index(parts)
            return [
                " ".join([*words[:i], "-".join([*parts[:j], f, *parts[j + 1 :]]), *words[i + 1 :]])
                for f in _plural_word(parts[j])
            ]
        return []
    return [" ".join([*words[:i], f, *words[i + 1 :]]) for f in _plural_word(words[i])]


def inflected_forms(name: str, language: str) -> list[str]:
    """The forms of ``name`` (tagged ``language``) to add to a lexicon; ``[]`` when none.

    >>> inflected_forms("goose", "en-GB"), inflected_forms("Hund", "de")
    (['geese'], [])
    """
    if form_language(language) == "en":
        return plural_forms(name)
    return []

"""Labels and aliases: normalisation, preferred labels, drop rules, ambiguity."""

from __future__ import annotations

from kgkit.vocab.aliases import (
    choose_labels,
    clean_aliases,
    is_numeric_only,
    match_key,
    normalize_alias,
    resolve_ambiguity,
)
from kgkit.vocab.spec import AliasRules, LanguageRules


def test_match_key_is_nfkc_folded_and_casefolded():
    # NFKC: Unicode Standard Annex #15; casefold: Python str.casefold (Unicode CaseFolding.txt)
    assert match_key("  Stra\u00dfe\u2003\tNORD ") == "strasse nord"
    assert match_key("\uff2b\uff41\uff59\uff41\uff4b") == "kayak"  # full-width letters
    assert normalize_alias("a\u00a0\u00a0b") == "a b"


def test_numeric_only():
    assert is_numeric_only("1984") and is_numeric_only("-- 12/3 --")
    assert not is_numeric_only("F1")


def test_profile_order_wins_then_smallest_text():
    labels = [("en", "Zed", 1), ("en", "b label", 0), ("en", "a label", 0)]
    pref, borrowed, others = choose_labels(labels, LanguageRules())
    assert pref == {"en": "a label"}
    assert sorted(others) == [("en", "Zed"), ("en", "b label")]


def test_untagged_label_is_a_valid_label():
    pref, _, _ = choose_labels([("", "Saltmere", 0)], LanguageRules(required=("en",)))
    assert pref == {"": "Saltmere"}


def test_languages_not_kept_are_left_out():
    rules = LanguageRules(required=("en",), optional=("de",))
    pref, _, _ = choose_labels([("en", "x", 0), ("fr", "y", 0), ("de-ch", "z", 0)], rules)
    assert pref == {"en": "x", "de-ch": "z"}


def test_fallback_lends_a_label_to_a_missing_language():
    rules = LanguageRules(required=("en",), optional=("de",), fallback=("de",))
    pref, borrowed, _ = choose_labels([("de", "Kanupolo", 0)], rules)
    assert pref == {"de": "Kanupolo", "en": "Kanupolo"} and borrowed == {"en": "de"}


def test_curated_label_overrides_and_the_old_one_becomes_an_alias():
    pref, _, others = choose_labels([("en", "football", 0)], LanguageRules(), {"en": "soccer"})
    assert pref == {"en": "soccer"} and others == [("en", "football")]


def _clean(aliases, rules=None, pref=None):
    pref = pref or {"en": "canoe polo"}
    return clean_aliases("t", pref, aliases, rules or AliasRules(), LanguageRules())


def test_empty_and_duplicate_aliases_always_go_and_are_reported():
    kept, dropped = _clean(
        [
            ("en", "  ", "alias"),
            ("en", "Canoe  Polo", "alias"),
            ("en", "kayak polo", "alias"),
            ("en", "Kayak Polo", "alias"),
        ]
    )
    assert kept == {"en": ["Kayak Polo"]}
    assert sorted(d["reason"] for d in dropped) == ["duplicate", "duplicate-of-label", "empty"]


def test_nothing_else_is_dropped_without_rules():
    kept, dropped = _clean([("en", "x", "alias"), ("en", "42", "alias"), ("", "the", "alias")])
    assert kept == {"": ["the"], "en": ["42", "x"]} and dropped == []


def test_opt_in_rules():
    rules = AliasRules(min_length=3, drop_numeric=True, stop=["The Game"])
    kept, dropped = _clean(
        [
            ("en", "cp", "alias"),
            ("en", "2024", "alias"),
            ("en", "the  game", "alias"),
            ("en", "paddle ball", "alias"),
        ],
        rules,
    )
    assert kept == {"en": ["paddle ball"]}
    assert {d["alias"]: d["reason"] for d in dropped} == {
        "cp": "too-short",
        "2024": "digits-and-punctuation-only",
        "the game": "stop-listed",
    }


def test_hidden_labels_can_be_left_out():
    kept, _ = _clean([("en", "canoepolo", "hidden")], AliasRules(hidden=False))
    assert kept == {}


def _names():
    return {
        "mercury-planet": ({"en": "Mercury"}, {"en": ["Hg planet"]}),
        "mercury-element": ({"en": "mercury (element)"}, {"en": ["mercury", "Hg"]}),
        "hg-band": ({"en": "HG"}, {}),
    }


def test_alias_collision_is_reported_with_all_its_topics_and_kept():
    names = _names()
    report, dropped, unlisted = resolve_ambiguity(names, "keep")
    assert report == [
        {"action": "kept", "key": "hg", "topics": ["hg-band", "mercury-element"]},
        {"action": "kept", "key": "mercury", "topics": ["mercury-element", "mercury-planet"]},
    ]
    assert dropped == [] and unlisted == set() and names == _names()


def test_alias_collision_preferred_only_keeps_it_where_it_is_a_label():
    names = _names()
    report, dropped, unlisted = resolve_ambiguity(names, "preferred-only")
    assert names["mercury-element"][1] == {}
    assert sorted(d["alias"] for d in dropped) == ["Hg", "mercury"]
    assert unlisted == set()


def test_alias_collision_drop_removes_the_key_from_the_lexicon():
    names = _names()
    _, dropped, unlisted = resolve_ambiguity(names, "drop")
    assert names["mercury-element"][1] == {}
    assert unlisted == {("hg-band", "hg"), ("mercury-planet", "mercury")}

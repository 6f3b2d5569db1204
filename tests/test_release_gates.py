"""Release gates: each test is named after the fault that makes a gate refuse.

Unit tests build :class:`kgkit.vocab.model.Vocabulary` values by hand (invented
Tidewell sports data); the tests at the end run a real compile and release.
"""

from __future__ import annotations

from kgkit.release.gates import (
    GATES,
    check_labels,
    check_lint,
    check_topic_loss,
    topic_text,
)
from kgkit.vocab.folder import vocabulary_files
from kgkit.vocab.model import Scheme, TopicRecord, Vocabulary

G = "http://example.org/graph/"
NS = "http://example.org/vocab/sport/"
SCHEME = Scheme(NS.rstrip("/"), "sport", NS, "Tidewell sport topics")


def vocab(*topics, languages=("en", "de")):
    return Vocabulary(SCHEME, tuple(sorted(topics, key=lambda t: t.id)), languages=languages)


def topic(tid, en=None, de=None, **kw):
    labels = {k: v for k, v in (("en", en), ("de", de)) if v is not None}
    return TopicRecord.make(tid, labels=labels, iri=NS + tid, **kw)


def gates_of(problems):
    return [p.gate for p in problems]


def test_empty_vocabulary_fails_no_topics_gate():
    assert [str(p) for p in check_labels(vocab())] == [
        "the vocabulary has no active topic [gate no-topics]"
    ]
    only_deprecated = vocab(topic("sport", "sport", "Sport").deprecate(None))
    assert gates_of(check_labels(only_deprecated)) == ["no-topics"]


def test_topic_without_any_label_fails_no_label_gate():
    v = vocab(
        topic("sport", "sport", "Sport"),
        topic("ghost", curie="tw:ghost", source=G + "ghost"),
    )
    [p] = check_labels(v)
    assert p.gate == "no-label"
    assert p.message == (
        "1 active topic without any preferred label (is the entity still in the graph?): "
        "ghost (tw:ghost)"
    )


def test_topic_without_required_language_fails_missing_language_gate():
    v = vocab(
        topic("sport", "sport", "Sport"),
        topic("canoe-polo", "canoe polo"),
        topic("sea-kayaking", "sea kayaking"),
    )
    assert check_labels(v, ["en"]) == []
    [p] = check_labels(v, ["en", "de"])
    assert p.gate == "missing-language"
    assert p.message == (
        "2 active topics without a preferred label in 'de' (languages.required): "
        "canoe polo (canoe-polo), sea kayaking (sea-kayaking)"
    )
    # a regional tag is a label in its language (RFC 4647 basic filtering)
    v2 = vocab(TopicRecord.make("sport", labels={"de-AT": "Sport"}, iri=NS + "sport"))
    assert check_labels(v2, ["de"]) == []


def test_many_topics_are_named_up_to_five_then_counted():
    v = vocab(*(topic(f"t{i}", f"topic {i}") for i in range(8)))
    [p] = check_labels(v, ["de"])
    assert p.message.endswith("topic 4 (t4) and 3 more")


def test_blank_label_fails_lint_error_gate():
    v = vocab(topic("sport", "sport", "Sport"), topic("swim", " ", "Schwimmen", parents=["sport"]))
    skos = vocabulary_files(v, ["skos"])["skos.ttl"]()
    problems = check_lint(v, skos)
    assert gates_of(problems) == ["lint-error"]
    assert problems[0].message.startswith("lint check blank-label fires 1 time on ")
    assert "(swim)" in problems[0].message
    good = vocab(
        topic("sport", "sport", "Sport"), topic("swim", "swim", "Schwimmen", parents=["sport"])
    )
    assert check_lint(good, vocabulary_files(good, ["skos"])["skos.ttl"]()) == []


def _previous(n):
    return vocab(*(topic(f"t{i:02}", f"topic {i}", f"Thema {i}") for i in range(n)))


def test_losing_more_than_the_share_fails_topic_loss_gate():
    prev = _previous(20)
    cut = vocab(*(t for t in prev.topics[:17]))  # 3 of 20 gone: 15 %
    [p] = check_topic_loss(cut, prev, 0.1, "release 1.0.0")
    assert p.gate == "topic-loss"
    assert p.message.startswith(
        "3 of the 20 active topics of release 1.0.0 are gone without a replacement "
        "(15%, more than the 10% release.max_topic_loss allows; was the dump cut short?): "
        "topic 17 (t17), topic 18 (t18), topic 19 (t19)"
    )
    assert check_topic_loss(cut, prev, 0.15) == []  # the spec allows it
    two_gone = vocab(*(t for t in prev.topics[:18]))
    assert check_topic_loss(two_gone, prev, 0.1) == []  # exactly 10 %: allowed


def test_deprecated_with_an_active_replacement_is_not_lost():
    prev = _previous(10)
    t = prev.topics
    # t08 replaced by t09 directly, t07 through a chain t07 -> t08 -> t09
    now = vocab(*t[:7], t[7].deprecate("t08"), t[8].deprecate("t09"), t[9])
    assert check_topic_loss(now, prev, 0.0) == []
    # a replacement that is itself gone does not save it
    now = vocab(*t[:8], t[8].deprecate("t99"), t[9])
    [p] = check_topic_loss(now, prev, 0.0)
    assert p.message.startswith("1 of the 10 active topics")


def test_topic_text_shows_label_beside_id():
    assert topic_text("dragon boat", "dragon-boat") == "dragon boat (dragon-boat)"
    assert set(GATES) == {
        "no-topics",
        "no-label",
        "missing-language",
        "lint-error",
        "unknown-entity",
        "topic-loss",
    }

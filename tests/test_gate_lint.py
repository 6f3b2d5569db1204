"""The lint-error gate checks the vocabulary held in memory (no SKOS text made or
parsed), and finds exactly what ``kgkit lint`` finds in that vocabulary's skos.ttl.

Each test is named after the fault it catches. Vocabularies are invented Tidewell
sport topics, crafted so that every error-level check that SKOS written by kgkit can
break fires, plus the demo's build and releases.
"""

from __future__ import annotations

import pytest

from kgkit.release import gates, lint
from kgkit.release.gates import check_lint, lint_input
from kgkit.release.lint import lint_concepts, lint_turtle
from kgkit.vocab import writers
from kgkit.vocab.folder import read_vocabulary, vocabulary_files
from kgkit.vocab.model import Scheme, TopicRecord, Vocabulary

NS = "http://example.org/vocab/sport/"
SCHEME = Scheme(NS.rstrip("/"), "sport", NS, "Tidewell sport topics")


def vocab(*topics, languages=("en", "de"), label_tags=None):
    return Vocabulary(
        SCHEME,
        tuple(sorted(topics, key=lambda t: t.id)),
        label_tags=label_tags or {},
        languages=languages,
    )


def topic(tid, labels=None, **kw):
    return TopicRecord.make(tid, labels=labels or {}, iri=NS + tid, **kw)


def from_memory(v):
    concepts, labels_of, up = lint_input(v)
    return lint_concepts(
        concepts, labels_of, up, schemes=[v.scheme.iri], languages=tuple(v.languages)
    )


def from_text(v):
    text = vocabulary_files(v, ["skos"])["skos.ttl"]()
    return lint_turtle(text, languages=tuple(v.languages), warnings=False)


def assert_same_findings(v):
    mem, text = from_memory(v), from_text(v)
    assert mem.concepts == text.concepts
    assert [(f.check, f.subjects, f.message, f.level) for f in mem.findings] == [
        (f.check, f.subjects, f.message, f.level) for f in text.findings
    ]
    return mem


SPORT = topic("sport", {"en": "sport", "de": "Sport"})

#: check name -> a vocabulary that breaks it (and, where kgkit can write it, a
#: variant: lent labels, deprecated topics, aliases)
CRAFTED = {
    "hierarchy-loop": vocab(
        SPORT,
        topic("paddling", {"en": "paddling"}, parents=("canoeing",)),
        topic("canoeing", {"en": "canoeing"}, parents=("paddling",)),
        topic("rowing", {"en": "rowing"}, parents=("rowing",)),
        # a deprecated record naming a parent gets the parent's skos:narrower only
        topic("old-skiff", {"en": "skiff"}, status="deprecated", parents=("sculling",)),
        topic("sculling", {"en": "sculling"}, parents=("old-skiff",)),
    ),
    "no-preferred-label": vocab(SPORT, topic("ghost", parents=("sport",))),
    "blank-label": vocab(
        SPORT,
        topic("swim", {"en": " ", "de": "Schwimmen"}, parents=("sport",)),
        topic("dive", {"en": "dive"}, aliases={"en": [""]}, parents=("sport",)),
    ),
    "two-preferred-labels": vocab(
        SPORT,
        # a label lent from en-GB is written under en, beside the en label
        topic("sail", {"en": "sailing", "en-GB": "yachting"}, parents=("sport",)),
        topic("row", {"en": "rowing", "EN": "oaring"}, parents=("sport",)),
        # two topics of one IRI are one concept in the file
        topic("kayak", {"en": "kayak"}, parents=("sport",)),
        TopicRecord.make("kayak-2", labels={"en": "canoe"}, iri=NS + "kayak"),
        label_tags={"sail": {"en-GB": "en"}},
    ),
    "label-kind-clash": vocab(
        SPORT,
        # language tags compare without case: "surf"@EN and "surf"@en are one label
        topic("surf", {"EN": "surf"}, aliases={"en": ["surf", "wave riding"]}, parents=("sport",)),
    ),
    "control-character-in-label": vocab(
        SPORT,
        topic("golf", {"en": "golf\u0007"}, parents=("sport",)),
        topic("polo", {"en": "polo"}, aliases={"en": ["water\u2028polo"]}, parents=("sport",)),
        # a zero-width joiner is part of ordinary words in some scripts: not flagged
        topic("kabaddi", {"en": "kabaddi", "hi": "कब\u200dड्डी"}, parents=("sport",)),
    ),
}


@pytest.mark.parametrize("check", sorted(CRAFTED))
def test_gate_on_the_vocabulary_misses_or_invents_a_lint_error(check):
    report = assert_same_findings(CRAFTED[check])
    assert check in report.fired()
    if check != "no-preferred-label":  # reported by the no-label gate instead
        [p] = [p for p in check_lint(CRAFTED[check]) if f" {check} " in p.message]
        assert p.gate == "lint-error"


def test_deprecated_topics_and_alias_equal_to_label_lint_alike():
    v = vocab(
        SPORT,
        topic("sea-kayaking", {"en": "sea kayaking"}, aliases={"en": ["sea kayaking"]},
              parents=("sport",)),
        topic("kayaking", {"en": "kayaking", "de": "Kajak"}, parents=("sport",)),
        topic("old-kayak", {"en": "kayak"}, status="deprecated", replaced_by="kayaking"),
        # a deprecated record that still names a parent: only the parent's skos:narrower
        topic("old-canoe", {"en": "canoe"}, status="deprecated", parents=("kayaking",)),
        topic("orphan", {"en": "orphan"}, status="deprecated", parents=("old-kayak",)),
    )  # fmt: skip
    assert assert_same_findings(v).findings == []
    assert check_lint(v) == []


def test_clean_vocabulary_has_no_lint_error():
    v = vocab(
        SPORT,
        topic("swim", {"en": "swim", "de": "Schwimmen"}, aliases={"de": ["Baden"]},
              parents=("sport",)),
    )  # fmt: skip
    assert assert_same_findings(v).findings == []
    assert check_lint(v) == []


def test_lint_gate_makes_or_parses_turtle(monkeypatch):
    def refuse(*args, **kwargs):
        raise AssertionError("the lint gate made or parsed SKOS text")

    monkeypatch.setattr(writers, "skos_text", refuse)
    monkeypatch.setattr(lint, "lint_turtle", refuse)
    monkeypatch.setattr(lint.rdflib, "Graph", refuse)
    [p] = check_lint(CRAFTED["blank-label"])
    assert p.message.startswith("lint check blank-label fires 2 times on ")
    assert gates.check_lint is check_lint


def test_gate_on_the_demo_differs_from_lint_of_its_skos_file(demo_workspace):
    root = demo_workspace["root"] / "vocab" / "tidewell"
    folders = [*demo_workspace["releases"], root / "build"]
    assert len(folders) >= 3
    for folder in folders:
        v = read_vocabulary(folder, languages=("en", "de"))
        assert assert_same_findings(v).concepts == len(v.topics)
        assert check_lint(v) == []
        # and the file the demo wrote is the text the vocabulary makes
        written = (folder / "skos.ttl").read_text(encoding="utf-8")
        mine = lint_turtle(written, languages=("en", "de"), warnings=False)
        assert mine.findings == from_memory(v).findings

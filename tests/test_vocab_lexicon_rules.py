"""The lexicon rules of a spec (inflected forms, common words) and the settle edit."""

from __future__ import annotations

import pytest

from kgkit.errors import SpecError
from kgkit.vocab.curation import apply_curation, load_curation
from kgkit.vocab.model import Topic
from kgkit.vocab.spec import CommonWordRule, load_spec

GOOD = """\
name: sport
namespace: http://example.org/vocab/sport/
select:
  - template: descendants
    params: {root: "<http://example.org/graph/sport>"}
"""


def _spec(workspace, text):
    path = workspace.vocab_dir / "sport.yaml"
    path.write_text(text, encoding="utf-8")
    return load_spec(workspace, path)


def test_lexicon_rules_not_read_from_the_spec(workspace):
    s = _spec(
        workspace,
        GOOD
        + "aliases:\n  inflected_forms: [en, en-GB, en]\n"
        + "  common_words: {min_zipf: 4.5, drop_aliases: true}\n",
    )
    assert s.aliases.inflected_forms == ("en", "en-gb")
    assert s.aliases.common_words == CommonWordRule(4.5, True)
    plain = _spec(workspace, GOOD)
    assert plain.aliases.inflected_forms == () and plain.aliases.common_words is None


@pytest.mark.parametrize(
    "extra, message",
    [
        (
            "aliases: {inflected_forms: [de]}\n",
            "sport.yaml:6: key 'aliases.inflected_forms[0]': no inflected forms for 'de' "
            "(languages served: en)",
        ),
        ("aliases: {inflected_forms: [en!]}\n", "'en!' is not a BCP 47 language tag"),
        ("aliases: {common_words: {}}\n", "key 'aliases.common_words': needs 'min_zipf'"),
        (
            "aliases: {common_words: {min_zipf: high}}\n",
            "key 'aliases.common_words.min_zipf': must be a number from 0 to 10, got 'high'",
        ),
        (
            "aliases: {common_words: {min_zipf: 4, drop: yes}}\n",
            "key 'aliases.common_words.drop': unknown key",
        ),
    ],
)
def test_bad_lexicon_rule_not_refused(workspace, extra, message):
    with pytest.raises(SpecError) as exc:
        _spec(workspace, GOOD + extra)
    assert message in str(exc.value) and "\n" not in str(exc.value)


@pytest.mark.parametrize(
    "text, message",
    [
        ("edits:\n  - settle: {name: bass}\n", "key 'edits[0].settle': needs 'keep'"),
        ("edits:\n  - settle: {name: '', keep: a}\n", "key 'edits[0].settle.name': must be"),
        ("edits:\n  - settle: {name: b, keep: []}\n", "key 'edits[0].settle.keep': must be"),
        ("edits:\n  - settle: {name: b, keep: a, topic: c}\n", "unknown field"),
    ],
)
def test_bad_settle_edit_not_refused(tmp_path, text, message):
    path = tmp_path / "v.curation.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(SpecError) as exc:
        load_curation(path)
    assert message in str(exc.value)


def test_settle_edit_not_carried_to_the_alias_stage(tmp_path):
    path = tmp_path / "v.curation.yaml"
    path.write_text(
        "edits:\n"
        "  - settle: {name: Bass, keep: bass-fish}\n"
        "    note: the food desk's word\n"
        "  - settle: {name: bass, keep: [bass-fish, gone], language: EN}\n",
        encoding="utf-8",
    )
    edits = load_curation(path)
    topics = {"bass-fish": Topic("bass-fish", None)}
    res = apply_curation(edits, topics, {}, lambda r: r, lambda t: {})
    (st,) = res.settlements
    assert (st.key, st.keep, st.language) == ("bass", frozenset({"bass-fish"}), None)
    assert res.applied == [
        {
            "action": "settle",
            "edit": 1,
            "file": path.name,
            "keep": ["bass-fish"],
            "line": 2,
            "note": "the food desk's word",
            "target": "Bass",
        }
    ]
    assert [(s["edit"], s["reason"]) for s in res.stale] == [
        (2, "topic 'gone' is not in the vocabulary")
    ]

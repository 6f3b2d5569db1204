"""End to end: the lexicon rules of a spec on a crafted graph (``vocab-lexicon-rules``):
inflected forms, common words, a settled name and ``preferred-only``'s removed keys."""

from __future__ import annotations

import shutil

import pytest
import wordfreq
from test_vocab_compile import compile_case

from kgkit.errors import SpecError
from kgkit.probe import load_lexicon
from kgkit.vocab.compile import compile_vocabulary
from kgkit.vocab.folder import read_lexicon


@pytest.fixture
def built(workspace):
    res, topics = compile_case(workspace, "lexicon-rules")
    return res, topics, read_lexicon(res.output / "lexicon.tsv")


def test_plural_not_in_lexicon_or_not_marked(built):
    res, _, rows = built
    made = {(r.topic, r.alias, r.source) for r in rows if r.kind == "inflected"}
    assert {("taco", "tacos", "taco"), ("sea-bass", "sea basses", "sea bass")} <= made
    assert ("hot-dog", "hot dogs", "hot dog") in made
    # the graph spells "geese" already: it stays an alias, no second row
    assert [(r.alias, r.kind) for r in rows if r.topic == "goose"] == [
        ("geese", "alias"),
        ("goose", "preferred"),
    ]
    header = (res.output / "lexicon.tsv").read_text(encoding="utf-8").splitlines()[0]
    assert header == "alias\tmatch_key\ttopic\tlanguage\tkind\tshared_by\tsource"
    assert res.report["counts"]["inflected_forms"] == len(made)


def test_plural_equal_to_another_topics_name_overrides_it(built):
    res, _, rows = built
    # "mice" (of mouse) equals the band's name: a shared key; preferred-only drops the form
    assert [(r.topic, r.kind) for r in rows if r.match_key == "mice"] == [
        ("mice-band", "preferred")
    ]
    assert {
        "action": "forms-dropped",
        "key": "mice",
        "topics": ["mice-band", "mouse-animal"],
    } in res.report["ambiguous"]
    gone = [d for d in res.report["dropped_aliases"] if d["alias"] == "mice"]
    assert [(d["topic"], d["reason"], d["source"]) for d in gone] == [
        ("mouse-animal", "ambiguous", "mouse")
    ]


def test_common_words_not_listed_with_their_frequency(built):
    res, _, rows = built
    listed = {(e["alias"], e["language"]): e for e in res.report["common_words"]}
    # wordfreq (Speer 2022, doi:10.5281/zenodo.7199437): the frequency of every name of
    # the lexicon, read from the package; the spec's threshold is 5.0
    expected = {
        (r.alias, r.language) for r in rows if wordfreq.zipf_frequency(r.alias, "en") >= 5.0
    }
    assert set(listed) == expected and ("round", "en") in expected
    assert listed[("round", "en")]["topics"] == ["boxing-round"]
    assert listed[("round", "en")]["zipf"] == wordfreq.zipf_frequency("round", "en")
    assert res.report["counts"]["common_words"] == len(expected)
    assert res.summary["common_words"] == len(expected)
    # drop_aliases: the beef's alias "round" goes, the boxing round keeps its label
    gone = {(d["topic"], d["alias"]) for d in res.report["dropped_aliases"]}
    assert ("beef-round", "round") in gone
    assert ("beef-round", "round") not in {(r.topic, r.alias) for r in rows}
    text = (res.output / "report.txt").read_text(encoding="utf-8")
    assert f"Zipf frequency): {len(expected)}" in text


def test_settled_name_not_left_to_the_chosen_topic(built):
    res, _, rows = built
    assert [(r.topic, r.kind) for r in rows if r.match_key == "bass"] == [("sea-bass", "alias")]
    assert res.report["curation"]["applied"][0]["action"] == "settle"
    (stale,) = res.report["curation"]["stale"]
    assert (stale["target"], stale["reason"]) == (
        "treble",
        "topic 'bass-voice' does not have this name",
    )
    assert not any(e["key"] == "bass" for e in res.report["ambiguous"])


def test_preferred_only_removes_a_key_without_saying_why(built):
    res, _, rows = built
    assert {
        "action": "removed",
        "key": "roll",
        "reason": "no topic has it as its preferred label",
        "topics": ["bread-roll", "drum-roll"],
    } in res.report["ambiguous"]
    assert not [r for r in rows if r.match_key in ("roll", "rolls")]


def test_lexicon_with_forms_not_byte_identical(workspace, built):
    res, _, _ = built
    first = {p.name: p.read_bytes() for p in res.output.iterdir()}
    again = compile_vocabulary(workspace, workspace.vocab_dir / "spec.yaml")
    assert {p.name: p.read_bytes() for p in again.output.iterdir()} == first


def test_plural_not_found_by_the_probe(built):
    res, _, _ = built
    hits = load_lexicon(res.output).find("Two Tacos, three hot dogs and sea basses.")
    assert [(h.text, [c.topic for c in h.candidates]) for h in hits] == [
        ("Tacos", ["taco"]),
        ("hot dogs", ["hot-dog"]),
        ("sea basses", ["sea-bass"]),
    ]


def test_stale_settle_passes_strict(workspace):
    from test_vocab_compile import load_case

    spec = load_case(workspace, "lexicon-rules")
    with pytest.raises(SpecError) as exc:
        compile_vocabulary(workspace, spec, strict=True)
    assert "edit 2 (settle treble) is stale: topic 'bass-voice' does not have this name" in str(
        exc.value
    )
    assert not (workspace.vocab_dir / "lexrules" / "build").exists()
    shutil.rmtree(workspace.vocab_dir / "lexrules", ignore_errors=True)


def test_common_words_missing_from_the_review_page(built):
    from kgkit.review import load_review, render_page

    res, _, _ = built
    page = render_page(load_review(res.output, lint=False))
    assert 'id="common"' in page and "Common words" in page
    round_zipf = f"{wordfreq.zipf_frequency('round', 'en'):.2f}"
    assert f"<td>round</td><td>en</td><td>{round_zipf}</td>" in page


def test_lexicon_with_or_without_source_column_not_read(tmp_path):
    from kgkit.probe import ProbeError

    head = "alias\tmatch_key\ttopic\tlanguage\tkind\tshared_by"
    (tmp_path / "lexicon.tsv").write_text(
        head + "\tsource\ntacos\ttacos\ttaco\ten\tinflected\t1\ttaco\n", encoding="utf-8"
    )
    ((hit,),) = [load_lexicon(tmp_path).find("two tacos")]
    assert hit.candidates[0].aliases == ("tacos (en, inflected)",)
    (tmp_path / "lexicon.tsv").write_text(
        head + "\ntaco\ttaco\ttaco\ten\tpreferred\t1\n", encoding="utf-8"
    )
    assert [h.text for h in load_lexicon(tmp_path).find("a taco")] == ["taco"]
    (tmp_path / "lexicon.tsv").write_text(head + "\tnotes\n", encoding="utf-8")
    with pytest.raises(ProbeError) as exc:
        load_lexicon(tmp_path)
    assert "lexicon.tsv:1: expected the tab-separated header" in str(exc.value)


def test_compile_summary_silent_about_forms_and_common_words(kgkit, workspace):
    from test_vocab_compile import load_case

    spec = load_case(workspace, "lexicon-rules")
    res = kgkit("compile", str(spec))
    assert res.exit_code == 0, res.output
    built = read_lexicon(workspace.vocab_dir / "lexrules" / "build" / "lexicon.tsv")
    forms = sum(1 for r in built if r.kind == "inflected")
    lines = res.output.splitlines()
    assert f"{forms} plural forms added to the lexicon" in lines
    assert any(
        x.endswith("common words at or above the spec's Zipf frequency (report.json common_words)")
        for x in lines
    )

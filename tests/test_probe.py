"""The probe: an annotator's first pass over a text with a release's lexicon."""

from __future__ import annotations

import unicodedata

import pytest
from conftest import DATA

from kgkit.cli import cli
from kgkit.errors import ArgumentError
from kgkit.probe import (
    ProbeError,
    curation_edits_for,
    load_lexicon,
    normalise_with_offsets,
    probe_corpus,
    probe_text,
    write_curation_edits,
)

LEX = DATA / "probe-lexicon"


@pytest.fixture(scope="module")
def lexicon():
    return load_lexicon(LEX)


def spans(hits):
    return [(h.text, [c.topic for c in h.candidates]) for h in hits]


def test_longest_match_wins_and_hits_do_not_overlap(lexicon):
    hits = probe_text(lexicon, "The canoe polo final, then a canoe.")
    assert spans(hits) == [("canoe polo", ["canoe-polo"]), ("canoe", ["canoe"])]
    assert (hits[0].start, hits[0].end) == (4, 14)


def test_word_boundaries(lexicon):
    # "canoes" and "precanoe" hold "canoe" but not as a word; "canoe-polo" splits at "-"
    hits = probe_text(lexicon, "canoes precanoe canoe-polo canoe_x canoe.")
    assert spans(hits) == [("canoe", ["canoe"]), ("canoe", ["canoe"])]
    assert [h.start for h in hits] == [16, 35]


def test_a_boundary_miss_does_not_hide_a_shorter_word(lexicon):
    # "canoe polos" fails at its end, but "canoe" inside it is still a word
    assert spans(probe_text(lexicon, "canoe polos")) == [("canoe", ["canoe"])]


def test_ambiguous_key_lists_every_candidate_with_parents(lexicon):
    (hit,) = probe_text(lexicon, "Netting, again.")
    assert hit.is_ambiguous
    assert [c.topic for c in hit.candidates] == ["crop-netting", "net-mending"]
    assert [c.parents for c in hit.candidates] == [
        (("gardening", "gardening"),),
        (("crafts", "crafts"),),
    ]


def test_case_folding_and_compatibility_forms_follow_unicode():
    lex = load_lexicon(LEX)
    # Unicode CaseFolding.txt: U+00DF (sharp s) folds to "ss" (full folding);
    # UAX #15: NFKC maps U+FB01 (the "fi" ligature) to "f" "i" and U+00A0 to a space.
    text = "STRASSENKÜCHE and \ufb01sh\u00a0 smoking and KAYAK  POLO"
    hits = probe_text(lex, text)
    assert spans(hits) == [
        ("STRASSENKÜCHE", ["street-food"]),
        ("\ufb01sh\u00a0 smoking", ["fish-smoking"]),
        ("KAYAK  POLO", ["canoe-polo"]),
    ]
    # the spans are exact slices of the original text
    assert all(text[h.start : h.end] == h.text for h in hits)


def test_combining_marks_are_matched_with_their_base(lexicon):
    # "café" written with a combining acute accent (NFD) still matches the NFC label
    text = "cafe\u0301 culture, not cafe culture"
    (hit,) = probe_text(lexicon, text)
    assert hit.text == "cafe\u0301 culture" and hit.candidates[0].topic == "cafe-culture"


def test_normalisation_matches_the_lexicon_match_key():
    # the probe must fold text exactly as the compiler folds aliases
    from kgkit.vocab.aliases import match_key

    samples = ["Kayak\tPolo", "Stra\u00dfe", "\ufb01sh", "ÅNGSTRÖM", "cafe\u0301", "ǅemal", "İzmir"]
    for s in samples:
        norm, spans_ = normalise_with_offsets(s)
        assert norm == match_key(s), s
        assert len(spans_) == len(norm)


def test_normalisation_keeps_a_span_per_character():
    norm, sp = normalise_with_offsets("a\ufb01  b")
    assert norm == "afi b"
    assert sp == [(0, 1), (1, 2), (1, 2), (2, 4), (4, 5)]
    assert unicodedata.normalize("NFKC", "\ufb01") == "fi"  # UAX #15


def test_corpus_shares_and_flags(tmp_path, lexicon):
    corpus = tmp_path / "corpus"
    corpus.mkdir()
    texts = ["canoe polo and netting", "netting again", "netting, canoe", "gardening"]
    for i, text in enumerate(texts):
        (corpus / f"doc{i}.txt").write_text(text, encoding="utf-8")
    (corpus / "ignored.md").write_text("netting netting", encoding="utf-8")
    report = probe_corpus(lexicon, corpus, threshold=0.5)
    assert report.documents == 4
    shares = {k.key: (k.documents, k.flagged) for k in report.keys}
    assert shares == {
        "netting": (3, True),
        "canoe polo": (1, False),
        "canoe": (1, False),
        "gardening": (1, False),
    }
    edits, skipped = curation_edits_for(report)
    assert [e["remove_alias"] for e in edits] == [
        {"topic": "crop-netting", "alias": "netting", "language": "en"},
        {"topic": "net-mending", "alias": "netting", "language": "en"},
    ]
    assert skipped == []
    # the edits are valid for the compiler's own curation reader
    from kgkit.vocab.curation import load_curation

    path = write_curation_edits(edits, tmp_path / "flagged.curation.yaml")
    loaded = load_curation(path)
    assert [(e.action, e.target, e.args["alias"]) for e in loaded] == [
        ("remove_alias", "crop-netting", "netting"),
        ("remove_alias", "net-mending", "netting"),
    ]


def test_preferred_labels_are_not_turned_into_alias_edits(tmp_path, lexicon):
    corpus = tmp_path / "c"
    corpus.mkdir()
    for i in range(3):
        (corpus / f"{i}.txt").write_text("gardening", encoding="utf-8")
    edits, skipped = curation_edits_for(probe_corpus(lexicon, corpus))
    assert edits == [] and skipped == [("gardening", "gardening", "en", "preferred")]


def test_bad_release_folder_and_bad_lexicon(tmp_path):
    with pytest.raises(ProbeError, match="no lexicon.tsv here"):
        load_lexicon(tmp_path)
    (tmp_path / "lexicon.tsv").write_text("alias\tkey\n", encoding="utf-8")
    with pytest.raises(ProbeError, match=r"lexicon.tsv:1: expected the tab-separated header"):
        load_lexicon(tmp_path)
    (tmp_path / "lexicon.tsv").write_text(
        "alias\tmatch_key\ttopic\tlanguage\tkind\tshared_by\nx\tx\tt\n", encoding="utf-8"
    )
    with pytest.raises(ProbeError, match=r"lexicon.tsv:2: expected 6 columns"):
        load_lexicon(tmp_path)


def test_cli_probe_text_file_and_stdin(runner, tmp_path):
    res = runner.invoke(cli, ["probe", str(LEX), "Kanupolo or netting?"])
    assert res.exit_code == 0, res.output
    assert res.output == (
        "1:1 [0:8] 'Kanupolo'\n"
        "    Kanupolo (canoe-polo)  parents: paddle sports (paddle-sports)\n"
        "1:13 [12:19] 'netting' ambiguous\n"
        "    crop netting (crop-netting)  parents: gardening (gardening)\n"
        "    net mending (net-mending)  parents: crafts (crafts)\n"
        "2 hits\n"
    )
    f = tmp_path / "a.txt"
    f.write_text("first line\npaddling on", encoding="utf-8")
    res = runner.invoke(cli, ["probe", str(LEX), "-f", str(f)])
    assert res.exit_code == 0 and res.output.startswith("2:1 [11:19] 'paddling'\n")
    res = runner.invoke(cli, ["probe", str(LEX), "-f", "-"], input="canoe")
    assert res.exit_code == 0 and res.output.endswith("1 hit\n")


def test_cli_probe_errors(runner, tmp_path):
    res = runner.invoke(cli, ["probe", str(LEX)])
    assert res.exit_code == 2 and "give either TEXT or -f FILE" in res.output
    bad = tmp_path / "bad.txt"
    bad.write_bytes(b"ok \xff")
    res = runner.invoke(cli, ["probe", str(LEX), "-f", str(bad)])
    assert res.exit_code == 1
    assert res.output == f"Error: {bad}:1:4: not UTF-8 text (byte \\xff)\n"
    res = runner.invoke(cli, ["probe", str(tmp_path), "x"])
    assert res.exit_code == 1
    assert res.output == f"Error: {tmp_path}: no lexicon.tsv here; give a release or build folder\n"


def test_cli_probe_corpus_writes_curation(runner, tmp_path):
    corpus = tmp_path / "corpus"
    corpus.mkdir()
    for i, text in enumerate(["netting", "netting and canoe", "canoe polo"]):
        (corpus / f"{i}.txt").write_text(text, encoding="utf-8")
    out = tmp_path / "edits.yaml"
    res = runner.invoke(
        cli, ["probe", str(LEX), "--corpus", str(corpus), "--write-curation", str(out)]
    )
    assert res.exit_code == 0, res.output
    assert res.output.splitlines()[0] == (
        "3 documents, 4 hits, 3 match keys; 1 too common (in more than 50% of the documents):"
    )
    assert (
        "  netting        2   66.7%  crop netting (crop-netting), net mending (net-mending)"
        "  TOO COMMON"
    ) in res.output
    assert res.output.endswith(f"2 remove_alias edits written to {out}\n")
    assert out.read_text(encoding="utf-8").count("remove_alias") == 2


def test_plain_text_takes_the_short_path_with_the_same_offsets():
    # NFKC-normalised text whose case folding keeps every length goes the fast way
    norm, sp = normalise_with_offsets("Kayak \t Polo")
    assert norm == "kayak polo"
    assert sp[4:7] == [(4, 5), (5, 8), (8, 9)]
    text = "Gig rowing at Vellmouth,  then KAYAK  polo.\n"
    hits = probe_text(load_lexicon(LEX), text)
    assert [(h.start, h.end, h.text) for h in hits] == [(31, 42, "KAYAK  polo")]


def test_corpus_errors(tmp_path, lexicon):
    with pytest.raises(ProbeError, match="no .txt documents in this folder"):
        probe_corpus(lexicon, tmp_path)
    (tmp_path / "a.txt").write_text("canoe", encoding="utf-8")
    with pytest.raises(ArgumentError, match="threshold: must be a share between 0 and 1, not 0"):
        probe_corpus(lexicon, tmp_path, threshold=0)
    (tmp_path / "b.txt").write_bytes(b"\xffcanoe")
    with pytest.raises(ProbeError, match=r"b.txt:1:1: not UTF-8 text \(byte \\xff\)"):
        probe_corpus(lexicon, tmp_path)

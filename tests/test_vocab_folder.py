"""A vocabulary folder read back gives the vocabulary that was written; bad files name
their line."""

from __future__ import annotations

import pytest
from conftest import make_topic

from kgkit.errors import BuildFileError
from kgkit.vocab.folder import read_lexicon, read_topics, read_vocabulary, vocabulary_files
from kgkit.vocab.model import LexiconRow, Report, Scheme, Vocabulary
from kgkit.vocab.writers import write_build

OUTPUTS = ("jsonl", "yaml", "skos", "lexicon")


def _vocab():
    topics = (
        make_topic("a", labels={"en": "alpha", "de": "Alpha"}, aliases={"en": ["first"]}),
        make_topic("b", labels={"en": "beta"}, parents=["a"], depth=1, flags=["x"]),
        make_topic("c", labels={"en": "gamma"}).deprecate("b"),
    )
    lexicon = (
        LexiconRow("Alpha", "alpha", "a", "de", "preferred", 1),
        LexiconRow("alpha", "alpha", "a", "en", "preferred", 1),
        LexiconRow("beta", "beta", "b", "en", "preferred", 1),
        LexiconRow("first", "first", "a", "en", "alias", 1),
    )
    report = Report(counts={"topics": 2, "deprecated": 1}, lost_names=[])
    scheme = Scheme("http://example.org/v", "v", "http://example.org/v/", "A title")
    return Vocabulary(scheme, topics, lexicon, report, {}, ("en",))


def test_written_folder_reads_back_as_the_same_vocabulary(tmp_path):
    v = _vocab()
    files = vocabulary_files(v, OUTPUTS)
    del files["report.txt"]  # the human summary needs a compile's full counts
    folder = write_build(tmp_path / "v" / "build", files)
    back = read_vocabulary(folder, ("en",))
    assert back.scheme == v.scheme
    assert back.topics == v.topics
    assert back.lexicon == v.lexicon
    assert back.report == v.report  # lost_names kept, absent keys stay absent
    assert [t.id for t in back.active_topics()] == ["a", "b"]
    assert back.display_label("a") == "alpha" and back.lexicon_keys("a") == {"alpha", "first"}


def test_bad_lines_are_named(tmp_path):
    (tmp_path / "topics.jsonl").write_text('{"id": "a"}\n{"id": 3}\n', encoding="utf-8")
    with pytest.raises(BuildFileError, match=r"topics.jsonl:2: a topic needs a string 'id'"):
        read_topics(tmp_path / "topics.jsonl")
    lex = tmp_path / "lexicon.tsv"
    lex.write_text(
        "alias\tmatch_key\ttopic\tlanguage\tkind\tshared_by\nx\tx\ta\ten\talias\tmany\n",
        encoding="utf-8",
    )
    with pytest.raises(BuildFileError, match=r"lexicon.tsv:2: shared_by 'many' is not a number"):
        read_lexicon(lex)

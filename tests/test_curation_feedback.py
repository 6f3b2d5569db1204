"""Curation feedback a person can act on: edits numbered 1, 2, 3 as they stand in the
file, named with file and line, and an edit undone by a later one reported as
overridden by that edit (each test is named after the undoing it triggers)."""

from __future__ import annotations

from test_vocab_build import SELECTED, WS, graph, report, spec, topics

from kgkit.vocab.compile import build_vocabulary
from kgkit.vocab.curation import load_curation

CURATION = """edits:
  - add_alias: {topic: rowing, alias: sculling, language: en}
  - set_label: {topic: ball-games, label: ball sports, language: en}
  - add_parent: {topic: rowing, parent: ball-games}
  - set_label: {topic: ball-games, label: team ball games, language: en}
  - add_alias: {topic: canoe-polo, alias: polo afloat, language: en}
  - remove_alias: {topic: canoe-polo, alias: polo afloat}
  - exclude: {topic: rowing}
"""


def _build(tmp_path, text=CURATION):
    path = tmp_path / "sport.curation.yaml"
    path.write_text(text, encoding="utf-8")
    edits = load_curation(path)
    return edits, build_vocabulary(WS, spec(), SELECTED, graph(), edits)


def test_edits_are_numbered_from_one_with_file_and_line(tmp_path):
    edits, _ = _build(tmp_path)
    assert [(e.index, e.line, e.where) for e in edits[:3]] == [
        (1, 2, "sport.curation.yaml:2"),
        (2, 3, "sport.curation.yaml:3"),
        (3, 4, "sport.curation.yaml:4"),
    ]
    d = edits[0].describe()
    assert (d["edit"], d["file"], d["line"]) == (1, "sport.curation.yaml", 2)


def test_edits_undone_by_later_ones_are_overridden_by_them(tmp_path):
    _, b = _build(tmp_path)
    cur = report(b)["curation"]
    got = [(o["edit"], o["action"], o["overridden_by"], o["reason"]) for o in cur["overridden"]]
    assert got == [
        (1, "add_alias", 7, "edit 7 excludes topic 'rowing'"),  # an exclude later in the file
        (2, "set_label", 4, "edit 4 sets another label"),  # a second label for ball-games
        (3, "add_parent", 7, "edit 7 excludes topic 'rowing'"),
        (5, "add_alias", 6, "edit 6 removes this alias again"),
    ]
    assert [a["edit"] for a in cur["applied"]] == [4, 6, 7]
    assert report(b)["counts"]["curation_overridden"] == 4
    assert report(b)["counts"]["curation_applied"] == 3
    t = topics(b)
    assert "rowing" not in t and t["ball-games"]["labels"]["en"] == "team ball games"


def test_edit_on_a_topic_an_earlier_exclude_removed_is_stale(tmp_path):
    text = """edits:
  - exclude: {topic: water-sports}
  - add_alias: {topic: rowing, alias: sculling, language: en}
"""
    _, b = _build(tmp_path, text)
    cur = report(b)["curation"]
    # rowing goes with the subtree of water-sports, which edit 1 excluded first
    assert [(s["edit"], s["reason"]) for s in cur["stale"]] == [
        (2, "edit 1 excludes topic 'rowing'")
    ]
    assert cur["overridden"] == [] and [a["edit"] for a in cur["applied"]] == [1]


def test_parent_edit_on_a_topic_merged_later_is_overridden_by_the_merge(tmp_path):
    text = """edits:
  - add_parent: {topic: rowing, parent: ball-games}
  - add_alias: {topic: rowing, alias: sculling, language: en}
  - merge: {topic: rowing, into: water-sports}
"""
    _, b = _build(tmp_path, text)
    cur = report(b)["curation"]
    assert [(o["edit"], o["overridden_by"]) for o in cur["overridden"]] == [(1, 3)]
    # the alias is not undone: it goes with the merged topic's names to water-sports
    assert [a["edit"] for a in cur["applied"]] == [2, 3]
    assert "sculling" in topics(b)["water-sports"]["aliases"]["en"]

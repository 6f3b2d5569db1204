"""The worklist of shared names (kgkit.worklist, ``kgkit triage``)."""

from __future__ import annotations

import json

import wordfreq
from test_vocab_compile import load_case

from kgkit.vocab.compile import compile_vocabulary
from kgkit.worklist import list_shared_names


def _build(ws, policy):
    spec = load_case(ws, "lexicon-rules")
    text = spec.read_text(encoding="utf-8").replace("preferred-only", policy)
    spec.write_text(text, encoding="utf-8")
    return compile_vocabulary(ws, spec).output


def test_shared_names_not_listed_riskiest_first(workspace, tmp_path):
    out = _build(workspace, "keep")
    corpus = tmp_path / "corpus"
    corpus.mkdir()
    (corpus / "a.txt").write_text("A drum roll, then Mice played.", encoding="utf-8")
    (corpus / "b.txt").write_text("A roll with butter.", encoding="utf-8")
    names = list_shared_names(out, corpus)
    assert [(n.key, n.topics, n.preferred_by) for n in names] == [
        # the settled key ("bass", kept by sea-bass only) is no longer shared
        ("mice", ("mice-band", "mouse-animal"), ("mice-band",)),
        ("roll", ("bread-roll", "drum-roll"), ()),
        ("rolls", ("bread-roll", "drum-roll"), ()),  # its plural: below "roll" in Zipf
    ]
    mice, roll, rolls = names
    assert rolls.zipf == wordfreq.zipf_frequency("rolls", "en") < roll.zipf
    # wordfreq (Speer 2022): the highest frequency of the key's names
    assert mice.zipf == max(wordfreq.zipf_frequency(x, "en") for x in ("Mice", "mice"))
    assert (roll.documents, roll.share, mice.documents) == (2, 1.0, 1)
    assert [(c.topic, c.label, c.parents) for c in roll.candidates] == [
        ("bread-roll", "bread roll", (("food", "food"),)),
        ("drum-roll", "drum roll", (("music", "music"),)),
    ]
    assert ("mouse-animal", "mice", "en", "inflected") in mice.names
    assert roll.in_lexicon and roll.action == "kept"


def test_keys_the_policy_removed_missing_from_the_worklist(workspace):
    out = _build(workspace, "preferred-only")
    names = {n.key: n for n in list_shared_names(out)}
    assert set(names) == {"mice", "roll"}
    roll = names["roll"]
    assert not roll.in_lexicon and roll.action == "removed"
    assert sorted((t, a, k) for t, a, _, k in roll.names) == [
        ("bread-roll", "roll", "alias"),
        ("drum-roll", "roll", "alias"),
    ]
    assert names["mice"].action == "forms-dropped" and names["mice"].documents is None


def test_triage_prints_nothing_useful(kgkit, workspace):
    out = _build(workspace, "keep")
    res = kgkit("triage", str(out), "--limit", "1")
    assert res.exit_code == 0, res.output
    lines = res.output.splitlines()
    assert lines[0] == f"3 shared names in {out}, the first 1 (riskiest first)"
    assert lines[1].startswith("  1. 'mice'  2 topics; preferred label of 1; Zipf ")
    assert lines[1].endswith("; in the lexicon (kept)")
    assert lines[2] == "       Mice (mice-band)  parents: music (music)"
    assert (
        lines[-1]
        == "settle a name in the curation file, e.g.: - settle: {name: mice, keep: [mice-band]}"
    )
    js = kgkit("triage", str(out), "--json")
    assert [n["key"] for n in json.loads(js.output)] == ["mice", "roll", "rolls"]


def test_triage_on_a_folder_without_lexicon_not_one_line(kgkit, tmp_path):
    res = kgkit("triage", str(tmp_path))
    assert res.exit_code == 1
    assert res.output.strip().startswith("Error: ") and "no lexicon.tsv" in res.output

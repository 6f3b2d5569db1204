"""The compile steps on in-memory data: ids, exclusions, languages, pruning, curation, outputs."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
import yaml

from kgkit.errors import SpecError
from kgkit.vocab.compile import build_vocabulary
from kgkit.vocab.curation import load_curation
from kgkit.vocab.folder import vocabulary_files
from kgkit.vocab.select import Fetched
from kgkit.vocab.spec import OUTPUTS, parse_spec
from kgkit.workspace import Config, Workspace

G = "http://example.org/graph/"
WS = Workspace(Path("/tmp/kgkit-vocab-test"), Config.default())


def spec(**extra):
    data = {
        "name": "sport",
        "namespace": "http://example.org/vocab/sport/",
        "select": [{"template": "descendants", "params": {"root": f"<{G}sport>"}}],
        **extra,
    }
    return parse_spec(data, Path("/tmp/kgkit-vocab-test/vocab/sport.yaml"), WS)


def graph():
    """sport > water-sports > canoe-polo, rowing; sport > ball-games > canoe-polo (two parents)."""
    f = Fetched()
    names = {
        "sport": [("en", "sport", 0), ("de", "Sport", 0)],
        "water-sports": [("en", "water sports", 0), ("de", "Wassersport", 0)],
        "ball-games": [("en", "ball games", 0)],
        "canoe-polo": [("en", "canoe polo", 0), ("de", "Kanupolo", 0)],
        "rowing": [("en", "rowing", 0), ("de", "Rudern", 0)],
    }
    f.labels = {G + k: v for k, v in names.items()}
    f.aliases = {G + "canoe-polo": [("en", "kayak polo", "alias")]}
    f.parents = {
        G + "water-sports": [G + "sport"],
        G + "ball-games": [G + "sport"],
        G + "canoe-polo": [G + "water-sports", G + "ball-games"],
        G + "rowing": [G + "water-sports"],
        G + "sport": [G + "activity"],
    }
    f.graphs = {G + k: {"tidewell"} for k in names}
    return f


SELECTED = sorted(G + k for k in ("sport", "water-sports", "ball-games", "canoe-polo", "rowing"))


def topics(build):
    """Topic id -> the topic as ``topics.jsonl`` holds it."""
    return {r.id: json.loads(json.dumps(r.to_json())) for r in build.topics}


def report(build):
    return build.report.to_json()


def files(build):
    return {name: make() for name, make in vocabulary_files(build, OUTPUTS).items()}


def test_without_rules_nothing_is_pruned():
    b = build_vocabulary(WS, spec(), SELECTED, graph())
    t = topics(b)
    assert sorted(t) == ["ball-games", "canoe-polo", "rowing", "sport", "water-sports"]
    assert t["canoe-polo"]["parents"] == ["ball-games", "water-sports"]
    assert t["canoe-polo"]["depth"] == 2 and t["sport"]["depth"] == 0
    assert report(b)["dropped_topics"] == [] and report(b)["dropped_aliases"] == []


def test_exclude_removes_the_subtree_unless_reachable_another_way():
    b = build_vocabulary(WS, spec(exclude=[f"<{G}water-sports>"]), SELECTED, graph())
    t = topics(b)
    assert "rowing" not in t and "water-sports" not in t
    assert t["canoe-polo"]["parents"] == ["ball-games"]  # still reachable through ball games
    assert {d["id"]: d["reason"] for d in report(b)["dropped_topics"]} == {
        "rowing": "in-excluded-subtree:water-sports",
        "water-sports": "excluded",
    }


def test_missing_language_kept_flagged_by_default():
    b = build_vocabulary(WS, spec(languages={"required": ["en", "de"]}), SELECTED, graph())
    assert topics(b)["ball-games"]["flags"] == ["missing-language:de"]


def test_missing_language_dropped_when_the_spec_says_so():
    s = spec(languages={"required": ["en", "de"], "missing": "drop"})
    b = build_vocabulary(WS, s, SELECTED, graph())
    t = topics(b)
    assert "ball-games" not in t
    assert t["canoe-polo"]["parents"] == ["water-sports"]
    assert report(b)["dropped_topics"] == [
        {
            "id": "ball-games",
            "label": "ball games",  # a dropped topic is named by its label too
            "reason": "missing-language:de",
            "source": G + "ball-games",
        }
    ]


def test_stop_topic_is_dropped_and_its_children_reattached():
    b = build_vocabulary(WS, spec(prune={"stop_topics": [f"<{G}water-sports>"]}), SELECTED, graph())
    t = topics(b)
    assert "water-sports" not in t
    assert t["rowing"]["parents"] == ["sport"]
    # canoe polo keeps ball games; its other parent went, so no reattachment is needed
    assert t["canoe-polo"]["parents"] == ["ball-games"]
    assert {"parents": ["sport"], "topic": "rowing"} in report(b)["reattached"]


def test_max_depth():
    b = build_vocabulary(WS, spec(prune={"max_depth": 1}), SELECTED, graph())
    assert sorted(topics(b)) == ["ball-games", "sport", "water-sports"]
    reasons = {d["id"]: d["reason"] for d in report(b)["dropped_topics"]}
    assert reasons == {"canoe-polo": "deeper-than-max-depth", "rowing": "deeper-than-max-depth"}


def test_min_descendants():
    b = build_vocabulary(WS, spec(prune={"min_descendants": 2}), SELECTED, graph())
    assert sorted(topics(b)) == ["sport", "water-sports"]


def test_min_instances_and_popularity():
    f = graph()
    f.instances.update({G + "sport": 9, G + "water-sports": 3, G + "rowing": 5})
    b = build_vocabulary(WS, spec(prune={"min_instances": 4}), SELECTED, f)
    assert sorted(topics(b)) == ["rowing", "sport"]
    rule = {"template": "descendants", "params": {"root": f"<{G}sport>"}, "min": 2}
    b = build_vocabulary(
        WS, spec(prune={"min_popularity": rule}), SELECTED, graph(), popularity={G + "rowing": 2}
    )
    assert sorted(topics(b)) == ["rowing"]
    assert {d["reason"] for d in report(b)["dropped_topics"]} == {"below-min-popularity"}


def test_id_clash_gives_both_a_hash_suffix():
    f = graph()
    other = "http://example.org/other/rowing"
    f.labels[other] = [("en", "rowing (boats)", 0)]
    b = build_vocabulary(WS, spec(), sorted([*SELECTED, other]), f)
    ids = sorted(i for i in topics(b) if i.startswith("rowing"))
    assert len(ids) == 2 and all(len(i) == len("rowing-") + 8 for i in ids)
    assert report(b)["id_clashes"][0]["id"] == "rowing"


def _curation(tmp_path, edits):
    path = tmp_path / "sport.curation.yaml"
    path.write_text(yaml.safe_dump({"edits": edits}, allow_unicode=True), encoding="utf-8")
    return load_curation(path)


def test_curation_edits_apply_and_stale_ones_are_reported(tmp_path):
    edits = _curation(
        tmp_path,
        [
            {
                "add_alias": {"topic": "rowing", "alias": "sculling", "language": "en"},
                "note": "desk",
            },
            {"remove_alias": {"topic": "canoe-polo", "alias": "Kayak Polo"}},
            {"set_label": {"topic": "ball-games", "label": "ball sports", "language": "en"}},
            {"add_parent": {"topic": "rowing", "parent": "ball-games"}},
            {"remove_parent": {"topic": "canoe-polo", "parent": "ball-games"}},
            {
                "add_topic": {
                    "id": "dragon-boat",
                    "labels": {"en": "dragon boat racing"},
                    "parents": ["water-sports"],
                }
            },
            {"add_alias": {"topic": "gone-topic", "alias": "x"}},
            {"add_alias": {"topic": "rowing", "alias": "Rowing", "language": "en"}},
        ],
    )
    b = build_vocabulary(WS, spec(), SELECTED, graph(), edits)
    t = topics(b)
    assert t["rowing"]["aliases"] == {"en": ["sculling"]}
    assert t["rowing"]["parents"] == ["ball-games", "water-sports"]
    assert t["canoe-polo"]["aliases"] == {} and t["canoe-polo"]["parents"] == ["water-sports"]
    assert t["ball-games"]["labels"]["en"] == "ball sports"
    assert t["ball-games"]["aliases"] == {"en": ["ball games"]}
    assert t["dragon-boat"]["origin"] == "curation" and t["dragon-boat"]["source"] is None
    assert t["dragon-boat"]["iri"] == "http://example.org/vocab/sport/dragon-boat"
    stale = report(b)["curation"]["stale"]
    assert [(s["edit"], s["target"]) for s in stale] == [(7, "gone-topic"), (8, "rowing")]
    assert report(b)["curation"]["applied"][0]["note"] == "desk"
    with pytest.raises(SpecError, match=r"edit 7 \(add_alias gone-topic\) is stale"):
        build_vocabulary(WS, spec(), SELECTED, graph(), edits, strict=True)


def test_merge_moves_aliases_and_leaves_a_deprecated_pointer(tmp_path):
    edits = _curation(tmp_path, [{"merge": {"topic": "ball-games", "into": "sport"}}])
    b = build_vocabulary(WS, spec(), SELECTED, graph(), edits)
    t = topics(b)
    assert t["ball-games"]["status"] == "deprecated" and t["ball-games"]["replaced_by"] == "sport"
    assert t["sport"]["aliases"] == {"en": ["ball games"]}
    assert t["canoe-polo"]["parents"] == ["water-sports"]  # sport link implied via water sports
    assert not any(row.topic == "ball-games" for row in b.lexicon)
    assert "owl:deprecated true" in files(b)["skos.ttl"]


def test_curation_exclude_without_subtree_reattaches_children(tmp_path):
    edits = _curation(tmp_path, [{"exclude": {"topic": "water-sports", "subtree": False}}])
    t = topics(build_vocabulary(WS, spec(), SELECTED, graph(), edits))
    assert t["rowing"]["parents"] == ["sport"] and "water-sports" not in t


def test_outputs_are_deterministic_and_consistent():
    one = files(build_vocabulary(WS, spec(), SELECTED, graph()))
    f = graph()
    f.parents = dict(reversed(list(f.parents.items())))
    two = files(build_vocabulary(WS, spec(), list(reversed(SELECTED)), f))
    assert one == two
    lines = one["topics.jsonl"].splitlines()
    assert [json.loads(x)["id"] for x in lines] == sorted(json.loads(x)["id"] for x in lines)
    by_id = {json.loads(x)["id"]: json.loads(x) for x in lines}
    in_yaml = yaml.safe_load(one["topics.yaml"])["topics"]
    assert {t["id"]: t for t in in_yaml} == by_id
    # topics.yaml reads like the hierarchy: each topic after its first parent, siblings by label
    assert [t["id"] for t in in_yaml] == [
        "sport", "ball-games", "canoe-polo", "water-sports", "rowing"
    ]  # fmt: skip
    head, *rows = one["lexicon.tsv"].splitlines()
    assert head == "alias\tmatch_key\ttopic\tlanguage\tkind\tshared_by"
    keys = [tuple(r.split("\t")) for r in rows]
    assert keys == sorted(keys, key=lambda r: (r[1], r[2], r[3], r[4], r[0]))

"""End to end: import a crafted graph, compile its spec, check the build files.

Each case lives in ``tests/data/vocab-<case>/`` (``graph.nt``, the spec and perhaps a
curation file) and is named after what it handles.
"""

from __future__ import annotations

import json
import shutil

import pytest
import yaml
from conftest import DATA

from kgkit.errors import SpecError
from kgkit.ingest import ImportOptions, import_files
from kgkit.vocab.compile import compile_vocabulary

BUILD_FILES = sorted(
    ["lexicon.tsv", "report.json", "report.txt", "skos.ttl", "topics.jsonl", "topics.yaml"]
)


def load_case(ws, case):
    """Import the case's graph as graph 'tidewell' and copy its spec files into vocab/."""
    folder = DATA / f"vocab-{case}"
    import_files(ws, [str(folder / "graph.nt")], ImportOptions(graph="tidewell"))
    spec = None
    for f in sorted(folder.glob("*.yaml")):
        shutil.copy(f, ws.vocab_dir / f.name)
        if not f.name.endswith(".curation.yaml"):
            spec = ws.vocab_dir / f.name
    return spec


def compile_case(ws, case, **kw):
    res = compile_vocabulary(ws, load_case(ws, case), **kw)
    topics = {}
    for line in (res.output / "topics.jsonl").read_text(encoding="utf-8").splitlines():
        r = json.loads(line)
        topics[r["id"]] = r
    return res, topics


def test_sport_spec_compiles_as_it_stands(workspace):
    res, t = compile_case(workspace, "sport")
    assert res.output == workspace.vocab_dir / "sport" / "build"
    assert sorted(p.name for p in res.output.iterdir()) == BUILD_FILES
    # net-mending (crafts) and activity are outside the subtree
    assert sorted(t) == ["canoe-polo", "reed-boat-racing", "sport", "water-sports"]
    cp = t["canoe-polo"]
    assert cp == {
        "aliases": {"en": ["Kayak Polo"]},
        "curie": "<http://example.org/graph/canoe-polo>",
        "depth": 2,
        "flags": [],
        "graph": "tidewell",
        "id": "canoe-polo",
        "iri": "http://example.org/vocab/sport/canoe-polo",
        "labels": {"de": "Kanupolo", "en": "canoe polo"},
        "notation": "WS-12",
        "origin": "graph",
        "parents": ["water-sports"],
        "replaced_by": None,
        "same_as": ["http://example.org/graph/kayak-polo"],
        "source": "http://example.org/graph/canoe-polo",
        "status": "active",
    }
    # an untagged label is a valid label; rdfs:subClassOf is a parent link too (profile)
    assert t["reed-boat-racing"]["labels"] == {"": "reed-boat racing"}
    assert t["reed-boat-racing"]["parents"] == ["water-sports"]
    # only empty and duplicate aliases go, each listed with its reason
    report = json.loads((res.output / "report.json").read_text(encoding="utf-8"))
    assert sorted((d["alias"], d["reason"]) for d in report["dropped_aliases"]) == [
        ("", "empty"),
        ("kayak polo", "duplicate"),
    ]
    assert report["dropped_topics"] == [] and report["new_roots"] == ["sport"]
    assert res.summary["topics"] == 4 and res.summary["output"] == str(res.output)


def test_same_store_and_spec_give_byte_identical_files(workspace):
    res, _ = compile_case(workspace, "stale-curation")
    first = {p.name: p.read_bytes() for p in res.output.iterdir()}
    again = compile_vocabulary(workspace, workspace.vocab_dir / "sport.yaml")
    assert {p.name: p.read_bytes() for p in again.output.iterdir()} == first


def test_cycle_in_hierarchy_is_reported_and_broken(workspace):
    res, t = compile_case(workspace, "cycle-in-hierarchy")
    # rule: break the link whose child keeps another parent: a -> c (a stays under root)
    assert res.report["cycles"] == [{"broken_edge": ["a", "c"], "members": ["a", "b", "c"]}]
    assert [t[x]["parents"] for x in ("a", "b", "c")] == [["root"], ["a"], ["b"]]
    assert [t[x]["depth"] for x in ("root", "a", "b", "c")] == [0, 1, 2, 3]
    assert res.summary["cycles_broken"] == 1


def test_redundant_parent_is_removed_and_counted(workspace):
    res, t = compile_case(workspace, "redundant-parent")
    assert t["football"]["parents"] == ["ball-games"]
    assert res.report["reductions"] == [["football", "sport"]]
    assert res.report["counts"]["reductions"] == 1


def test_missing_language_is_dropped_by_the_spec_policy(workspace):
    res, t = compile_case(workspace, "missing-language")
    assert sorted(t) == ["rowing", "sport"]
    assert {d["id"]: d["reason"] for d in res.report["dropped_topics"]} == {
        "gig-racing": "missing-language:en",
        "sculling": "missing-language:de",
    }
    assert t["rowing"]["labels"] == {"de": "Rudern", "en": "rowing"}


def test_alias_collision_is_reported_and_settled_by_the_policy(workspace):
    res, t = compile_case(workspace, "alias-collision")
    assert res.report["ambiguous"] == [
        {
            "action": "kept-as-preferred-only",
            "key": "mercury",
            "topics": ["mercury-element", "mercury-planet"],
        },
        {
            "action": "kept-as-preferred-only",
            "key": "quicksilver",
            "topics": ["mercury-element", "quicksilver-band"],
        },
    ]
    assert t["mercury-element"]["aliases"] == {}
    lexicon = (res.output / "lexicon.tsv").read_text(encoding="utf-8").splitlines()
    assert lexicon == [
        "alias\tmatch_key\ttopic\tlanguage\tkind\tshared_by",
        "Mercury\tmercury\tmercury-planet\ten\tpreferred\t1",
        "mercury (element)\tmercury (element)\tmercury-element\ten\tpreferred\t1",
        "Quicksilver\tquicksilver\tquicksilver-band\ten\tpreferred\t1",
    ]
    assert res.summary["ambiguous_keys"] == 2


def test_stop_topic_is_dropped_and_its_child_reattached(workspace):
    res, t = compile_case(workspace, "stop-topic")
    assert sorted(t) == ["kite-flying", "sport"]
    assert t["kite-flying"]["parents"] == ["sport"]
    assert res.report["dropped_topics"] == [
        {
            "id": "other",
            "label": "other",
            "reason": "stop-topic",
            "source": "http://example.org/graph/other",
        }
    ]


def test_orphan_reattached_or_new_root(workspace):
    res, t = compile_case(workspace, "orphan-reattached")
    assert t["rowing"]["parents"] == ["sport"] and t["rowing"]["depth"] == 1
    assert {"parents": ["sport"], "topic": "rowing"} in res.report["reattached"]
    assert "lone" in res.report["new_roots"] and t["lone"]["depth"] == 0
    assert res.report["curation"]["applied"][0]["note"] == "too broad for the sports desk"


def test_stale_curation_is_reported_and_strict_makes_it_an_error(workspace):
    res, t = compile_case(workspace, "stale-curation")
    assert t["canoe-polo"]["aliases"] == {"en": ["Kayak Polo", "canoepolo"]}
    assert t["reed-boat-racing"]["status"] == "deprecated"
    assert t["reed-boat-racing"]["replaced_by"] == "water-sports"
    assert t["water-sports"]["aliases"] == {"": ["reed-boat racing"]}
    assert t["dragon-boat-racing"]["parents"] == ["water-sports"]
    stale = res.report["curation"]["stale"]
    assert [(s["edit"], s["action"], s["target"]) for s in stale] == [
        (4, "add_alias", "ice-hockey"),
        (5, "set_label", "canoe-polo"),
    ]
    assert stale[0]["note"] == "the graph dropped this topic"
    before = {p.name: p.read_bytes() for p in res.output.iterdir()}
    with pytest.raises(SpecError, match=r"sport\.curation\.yaml:9: edit 4 .* is stale"):
        compile_vocabulary(workspace, workspace.vocab_dir / "sport.yaml", strict=True)
    assert {p.name: p.read_bytes() for p in res.output.iterdir()} == before


def test_topics_yaml_holds_the_same_topics(workspace):
    res, t = compile_case(workspace, "sport")
    data = yaml.safe_load((res.output / "topics.yaml").read_text(encoding="utf-8"))
    assert {r["id"]: r for r in data["topics"]} == t
    assert data["scheme"]["iri"] == "http://example.org/vocab/sport"


def test_thin_topics_by_instances_and_by_popularity(workspace):
    folder = DATA / "vocab-thin-topics"
    import_files(workspace, [str(folder / "graph.nt")], ImportOptions(graph="tidewell"))
    for name in ("instances.yaml", "popular.yaml"):
        shutil.copy(folder / name, workspace.vocab_dir / name)
    res = compile_vocabulary(workspace, workspace.vocab_dir / "instances.yaml")
    # rowing has two clips typed with it; the others fewer
    assert res.summary["topics"] == 1
    assert {d["id"]: d["reason"] for d in res.report["dropped_topics"]} == {
        "canoe-polo": "fewer-instances-than-min",
        "kite-flying": "fewer-instances-than-min",
        "sport": "fewer-instances-than-min",
    }
    # the built-in popularity template counts statements pointing at each topic:
    # rowing 3 (two types, one mention), canoe polo 1, kite flying none
    res = compile_vocabulary(workspace, workspace.vocab_dir / "popular.yaml")
    assert {d["id"]: d["reason"] for d in res.report["dropped_topics"]} == {
        "canoe-polo": "below-min-popularity",
        "kite-flying": "below-min-popularity",
    }
    assert res.summary["topics"] == 1

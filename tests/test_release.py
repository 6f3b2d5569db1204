"""The release cycle end to end: dump -> release 1 -> refreshed dump -> release 2 -> verify.

Dumps are small N-Triples files written here (invented Tidewell sports desk data);
the curation file has edits that keep applying and one that goes stale.
"""

from __future__ import annotations

import json

import pytest
import rdflib
from rdflib.namespace import DCTERMS, OWL, SKOS

from kgkit.ingest import ImportOptions, import_files
from kgkit.release.diffing import diff_folders
from kgkit.release.lint import lint_path
from kgkit.release.manifest import content_hash, file_sha256, verify_release
from kgkit.release.release import ReleaseError, make_release
from kgkit.release.versioning import NothingChangedError, VersionError

G = "http://example.org/graph/"
V = "http://example.org/vocab/sport/"
PREF = "http://www.w3.org/2004/02/skos/core#prefLabel"
ALT = "http://www.w3.org/2004/02/skos/core#altLabel"
BROADER = "http://www.w3.org/2004/02/skos/core#broader"
SAME = "http://www.w3.org/2002/07/owl#sameAs"

TOPICS_1 = {  # id -> (en label, de label, parent, aliases)
    "sport": ("sport", "Sport", None, []),
    "water-sports": ("water sports", "Wassersport", "sport", []),
    "canoe-polo": ("canoe polo", "Kanupolo", "water-sports", ["kayak polo"]),
    "dragon-boat": ("dragon boat", "Drachenboot", "water-sports", []),
    "harbour-swim": ("harbour swim", "Hafenschwimmen", "water-sports", []),
    "ball-games": ("ball games", "Ballspiele", "sport", []),
    "beach-volleyball": ("beach volleyball", "Beachvolleyball", "ball-games", []),
}


def dump(topics, extra=()):
    lines = []
    for tid, (en, de, parent, aliases) in topics.items():
        s = f"<{G}{tid}>"
        lines.append(f'{s} <{PREF}> "{en}"@en .')
        if de is not None:
            lines.append(f'{s} <{PREF}> "{de}"@de .')
        for a in aliases:
            lines.append(f'{s} <{ALT}> "{a}"@en .')
        if parent:
            lines.append(f"{s} <{BROADER}> <{G}{parent}> .")
    lines.extend(extra)
    return "\n".join(lines) + "\n"


def topics_2():
    t = dict(TOPICS_1)
    del t["dragon-boat"]  # removed from the graph; a redirect points at its successor
    t["dragon-boat-racing"] = ("dragon boat racing", "Drachenbootrennen", "water-sports", [])
    t["sea-kayaking"] = ("sea kayaking", "Seekajak", "water-sports", [])
    t["beach-volleyball"] = ("beach volley", "Beachvolleyball", "ball-games", [])  # relabelled
    t["harbour-swim"] = ("harbour swim", "Hafenschwimmen", "sport", [])  # moved
    return t


REDIRECT = [f"<{G}dragon-boat> <{SAME}> <{G}dragon-boat-racing> ."]

SPEC = f"""name: sport
title: Tidewell sport topics
namespace: {V}
select:
  - template: descendants
    params: {{root: "<{G}sport>"}}
    include_root: true
languages:
  required: [en, de]
"""

CURATION = """edits:
  - add_alias: {topic: canoe-polo, alias: polo in canoes, language: en}
    note: what the sports desk writes
  - add_parent: {topic: beach-volleyball, parent: water-sports}
    note: the beach desk files it under water sports as well
  - add_alias: {topic: dragon-boat, alias: dragon boating, language: en}
    note: festival coverage
"""


def setup(ws, text, name="dump-1.nt"):
    path = ws.root / name
    path.write_text(text, encoding="utf-8")
    import_files(ws, [str(path)], ImportOptions(graph="tidewell"))
    spec = ws.vocab_dir / "sport.yaml"
    spec.write_text(SPEC, encoding="utf-8")
    (ws.vocab_dir / "sport.curation.yaml").write_text(CURATION, encoding="utf-8")
    return spec


def topics_of(folder):
    return {
        r["id"]: r
        for r in map(json.loads, (folder / "topics.jsonl").read_text(encoding="utf-8").splitlines())
    }


RELEASE_FILES = [
    "changelog.json",
    "changelog.md",
    "lexicon.tsv",
    "manifest.json",
    "report.json",
    "skos.ttl",
    "topics.jsonl",
    "topics.yaml",
]


def test_worked_cycle(workspace):
    ws = workspace
    spec = setup(ws, dump(TOPICS_1))
    r1 = make_release(ws, spec)
    assert r1.version == "1.0.0" and r1.previous is None
    home = ws.vocab_dir / "sport"
    assert r1.path == home / "1.0.0"
    assert sorted(p.name for p in r1.path.iterdir()) == RELEASE_FILES
    t1 = topics_of(r1.path)
    assert sorted(t1) == sorted(TOPICS_1)
    assert t1["canoe-polo"]["aliases"] == {"en": ["kayak polo", "polo in canoes"]}
    assert t1["beach-volleyball"]["parents"] == ["ball-games", "water-sports"]
    assert verify_release(r1.path).ok
    cl1 = json.loads((r1.path / "changelog.json").read_text())
    assert cl1["previous"] is None and cl1["changes"] == [] and cl1["stale_curation"] == []

    # the refreshed dump, and one more curation edit
    setup(ws, dump(topics_2(), REDIRECT), "dump-2.nt")
    with open(ws.vocab_dir / "sport.curation.yaml", "a", encoding="utf-8") as fh:
        fh.write("  - set_label: {topic: sport, label: sports, language: en}\n")
    r2 = make_release(ws, spec)
    assert r2.version == "2.0.0" and r2.previous == "1.0.0" and r2.level == "major"
    t2 = topics_of(r2.path)
    dep = t2["dragon-boat"]
    assert dep["status"] == "deprecated" and dep["replaced_by"] == "dragon-boat-racing"
    assert dep["parents"] == [] and dep["aliases"] == {}
    assert r2.deprecated == [
        {"id": "dragon-boat", "replaced_by": "dragon-boat-racing", "via": "graph-link"}
    ]
    # deprecated topics carry no lexicon rows
    lexicon = (r2.path / "lexicon.tsv").read_text(encoding="utf-8").splitlines()
    assert not [row for row in lexicon if row.split("\t")[2] == "dragon-boat"]
    assert any(row.split("\t")[2] == "dragon-boat-racing" for row in lexicon)
    # SKOS: owl:deprecated true and dct:isReplacedBy (W3C SKOS Reference 2009 leaves
    # deprecation to OWL 2 owl:deprecated; the replacement link is DCMI Terms isReplacedBy)
    g = rdflib.Graph().parse(r2.path / "skos.ttl", format="turtle")
    old = rdflib.URIRef(V + "dragon-boat")
    assert g.value(old, OWL.deprecated) == rdflib.Literal(True)
    assert g.value(old, DCTERMS.isReplacedBy) == rdflib.URIRef(V + "dragon-boat-racing")
    assert (old, SKOS.broader, None) not in g and (old, SKOS.altLabel, None) not in g

    cl = json.loads((r2.path / "changelog.json").read_text(encoding="utf-8"))
    got = [(c["kind"], c["topic"], c["cause"], c["before"], c["after"]) for c in cl["changes"]]
    assert got == [
        ("deprecated", "dragon-boat", "graph", None, "dragon-boat-racing"),
        ("added", "dragon-boat-racing", "graph", None, "dragon boat racing"),
        ("added", "sea-kayaking", "graph", None, "sea kayaking"),
        ("moved", "harbour-swim", "graph", ["water-sports"], ["sport"]),
        ("relabelled", "beach-volleyball", "graph", "beach volleyball", "beach volley"),
        ("relabelled", "sport", "curation", "sport", "sports"),
        # the compiler keeps a replaced preferred label as an alias
        ("alias-added", "sport", "curation", None, "sport"),
    ]
    assert cl["counts"] == {
        "deprecated": 1,
        "added": 2,
        "moved": 1,
        "relabelled": 2,
        "alias-added": 1,
    }
    # the edit aimed at the deprecated topic is carried to its replacement, which also
    # inherits every name the deprecated topic had in release 1 (issue 10)
    assert cl["stale_curation"] == []
    report = json.loads((r2.path / "report.json").read_text(encoding="utf-8"))
    assert report["curation"]["stale"] == []
    assert [a["target"] for a in report["curation"]["applied"]] == [
        "canoe-polo",
        "beach-volleyball",
        "dragon-boat",
        "sport",
    ]
    (carried_edit,) = report["curation"]["carried"]
    assert carried_edit["carried"] == {"from": "dragon-boat", "to": "dragon-boat-racing"}
    assert t2["dragon-boat-racing"]["aliases"] == {
        "de": ["Drachenboot"],
        "en": ["dragon boat", "dragon boating"],
    }
    assert [(c["name"], c["result"]) for c in report["carried_names"]] == [
        ("Drachenboot", "kept"),
        ("dragon boat", "kept"),
        ("dragon boating", "already-a-name"),
    ]
    # the relabelled topic's old label matches nothing now: listed, with the reason
    assert [
        (n["topic"], n["name"], n["reason"], n["still_matches"]) for n in report["lost_names"]
    ] == [("beach-volleyball", "beach volleyball", "no-longer-given", [])]
    md = (r2.path / "changelog.md").read_text(encoding="utf-8")
    assert md.startswith("# sport 2.0.0\n\nChanges since 1.0.0. Version: major")
    assert (
        "- deprecated dragon boat (dragon-boat), replaced by dragon boat racing "
        "(dragon-boat-racing)  (graph)" in md
    )
    assert "## Curation edits that no longer apply" not in md
    # the curated edits still apply
    assert t2["canoe-polo"]["aliases"] == {"en": ["kayak polo", "polo in canoes"]}
    assert t2["beach-volleyball"]["parents"] == ["ball-games", "water-sports"]

    # release 1 untouched, both verify, the diff command sees the same changes
    assert verify_release(r1.path).ok and verify_release(r2.path).ok
    assert diff_folders(r1.path, r2.path).to_json()["changes"] == cl["changes"]
    assert lint_path(r2.path).errors == []

    # verify catches a tampered file
    lex = r2.path / "lexicon.tsv"
    kept = lex.read_bytes()
    lex.write_text(lex.read_text(encoding="utf-8") + "dragon\tdragon\tdragon-boat\ten\talias\t1\n")
    res = verify_release(r2.path)
    assert not res.ok and [p["file"] for p in res.problems] == ["lexicon.tsv"]
    lex.write_bytes(kept)  # a release is built only on a previous release that verifies

    # nothing changed since 2.0.0: refused, unless a greater version is given
    with pytest.raises(NothingChangedError, match="no topic changed since release 2.0.0"):
        make_release(ws, spec)
    with pytest.raises(VersionError, match="not greater than the previous release 2.0.0"):
        make_release(ws, spec, version="1.5.0")
    with pytest.raises(ReleaseError, match="release exists already; not overwriting it"):
        make_release(ws, spec, version="2.0.0")
    r3 = make_release(ws, spec, version="2.0.1")
    assert r3.version == "2.0.1" and r3.diff.changes == []
    # the deprecated topic is carried over unchanged
    assert topics_of(r3.path)["dragon-boat"] == dep
    assert sorted(p.name for p in home.iterdir()) == ["1.0.0", "2.0.0", "2.0.1", "build"]

    # a third dump: the successor goes too, redirected again; the older pointer follows
    t3 = topics_2()
    del t3["dragon-boat-racing"]
    redirect = [f"<{G}dragon-boat-racing> <{SAME}> <{G}sea-kayaking> ."]
    setup(ws, dump(t3, redirect), "dump-3.nt")
    r4 = make_release(ws, spec)
    assert r4.version == "3.0.0"
    t4 = topics_of(r4.path)
    assert t4["dragon-boat-racing"]["replaced_by"] == "sea-kayaking"
    assert t4["dragon-boat"]["replaced_by"] == "sea-kayaking"
    # (setup wrote the curation file afresh: the set_label edit is gone, and so is its effect)
    assert [(c.kind, c.topic, c.cause, c.before, c.after) for c in r4.diff.changes] == [
        ("deprecated", "dragon-boat-racing", "graph", None, "sea-kayaking"),
        ("relabelled", "sport", "curation", "sports", "sport"),
        # every name of the deprecated topic (its own, and those it inherited in 2.0.0,
        # the carried curation edit's alias among them) goes on to the replacement
        ("alias-added", "sea-kayaking", "graph", None, "Drachenboot"),
        ("alias-added", "sea-kayaking", "graph", None, "Drachenbootrennen"),
        ("alias-added", "sea-kayaking", "graph", None, "dragon boat racing"),
        ("alias-added", "sea-kayaking", "graph", None, "dragon boat"),
        ("alias-added", "sea-kayaking", "graph", None, "dragon boating"),
        ("alias-removed", "sport", "curation", "sport", None),
        ("replacement-changed", "dragon-boat", "graph", "dragon-boat-racing", "sea-kayaking"),
    ]


def test_release_is_reproducible(tmp_path):
    """Same inputs in two workspaces: the same bytes, except the manifest's release time."""
    from kgkit.workspace import init_workspace

    out = []
    for name in ("a", "b"):
        ws = init_workspace(tmp_path / name)
        spec = setup(ws, dump(TOPICS_1))
        make_release(ws, spec)
        setup(ws, dump(topics_2(), REDIRECT), "dump-2.nt")  # with a deprecation
        out.append(make_release(ws, spec).path)
    a, b = out
    assert a.name == b.name == "2.0.0"
    for name in RELEASE_FILES:
        if name != "manifest.json":
            assert (a / name).read_bytes() == (b / name).read_bytes(), name
    ma, mb = (json.loads((p / "manifest.json").read_text()) for p in out)
    ma.pop("released"), mb.pop("released")
    assert ma == mb


def test_manifest_contents(workspace):
    r = make_release(workspace, setup(workspace, dump(TOPICS_1)))
    m = json.loads((r.path / "manifest.json").read_text(encoding="utf-8"))
    assert sorted(m["files"]) == sorted(set(RELEASE_FILES) - {"manifest.json"})
    for name, entry in m["files"].items():
        assert entry["sha256"] == file_sha256(r.path / name)
        assert entry["bytes"] == (r.path / name).stat().st_size
    # the whole-content hash: sha256 of the `sha256sum` listing (GNU coreutils format)
    assert m["content_sha256"] == content_hash(m["files"])
    [src] = m["sources"]
    dump_file = workspace.root / "dump-1.nt"
    assert src["graph"] == "tidewell" and src["sha256"] == file_sha256(dump_file)
    assert src["triples"] == len(dump_file.read_text().splitlines())
    assert m["spec"] == {
        "path": "vocab/sport.yaml",
        "sha256": file_sha256(workspace.vocab_dir / "sport.yaml"),
    }
    assert m["curation"]["sha256"] == file_sha256(workspace.vocab_dir / "sport.curation.yaml")
    assert [t["name"] for t in m["templates"]] == ["descendants"]
    assert m["templates"][0]["sha256"] and m["version"] == "1.0.0"
    assert m["counts"]["topics"] == 7 and m["counts"]["deprecated"] == 0
    assert m["released"].endswith("Z")


def test_failed_release_leaves_nothing(workspace, monkeypatch):
    spec = setup(workspace, dump(TOPICS_1))
    import kgkit.release.release as rel

    def boom(*a, **k):
        raise OSError("disk full")

    monkeypatch.setattr(rel, "manifest_json", boom)
    with pytest.raises(OSError):
        make_release(workspace, spec)
    home = workspace.vocab_dir / "sport"
    assert sorted(p.name for p in home.iterdir()) == ["build"]


def _concept_blocks(ttl: str) -> dict[str, str]:
    """Turtle text of the writer's output cut into blocks: subject IRI -> block."""
    blocks = {}
    for block in ttl.split("\n\n"):
        head = block.split(" ", 1)[0]
        blocks[head] = block
    return blocks


def test_merge_by_curation_and_lent_labels(workspace):
    """A curation merge deprecates with the merge target as replacement; re-writing the
    files for a deprecation keeps every other byte of the compile, lent labels included."""
    ws = workspace
    topics = dict(TOPICS_1)
    topics["sea-kayaking"] = ("sea kayaking", None, "water-sports", [])  # no German label
    spec = setup(ws, dump(topics))
    spec.write_text(SPEC + "  fallback: [en]\n", encoding="utf-8")
    r1 = make_release(ws, spec)
    assert "fallback-label:de" in topics_of(r1.path)["sea-kayaking"]["flags"]
    # the graph drops dragon-boat without any redirect: deprecated, no replacement
    setup(ws, dump({k: v for k, v in topics.items() if k != "dragon-boat"}), "dump-2.nt")
    with open(ws.vocab_dir / "sport.curation.yaml", "a", encoding="utf-8") as fh:
        fh.write("  - merge: {topic: harbour-swim, into: water-sports}\n")
    # one topic of eight gone: more than the default share the topic-loss gate allows
    spec.write_text(SPEC + "  fallback: [en]\nrelease: {max_topic_loss: 0.2}\n", encoding="utf-8")
    r2 = make_release(ws, spec)
    assert r2.version == "2.0.0"
    got = {(c.kind, c.topic): (c.cause, c.after) for c in r2.diff.changes}
    assert got[("deprecated", "harbour-swim")] == ("curation", "water-sports")
    assert got[("deprecated", "dragon-boat")] == ("graph", None)
    assert got[("alias-added", "water-sports")][0] == "curation"
    assert r2.deprecated == [{"id": "dragon-boat", "replaced_by": None, "via": None}]
    t = topics_of(r2.path)
    assert t["harbour-swim"]["replaced_by"] == "water-sports"
    assert t["dragon-boat"]["status"] == "deprecated" and t["dragon-boat"]["replaced_by"] is None
    # the compile follows on release 1 itself: the build holds the deprecated concept
    # too, and the release's files are the build's, byte for byte, lent labels included
    build = _concept_blocks((ws.vocab_dir / "sport" / "build" / "skos.ttl").read_text())
    rel = _concept_blocks((r2.path / "skos.ttl").read_text())
    assert f"<{V}dragon-boat>" in build and rel == build
    assert f"<{V}sea-kayaking>" in build and '"sea kayaking"@en' in rel[f"<{V}sea-kayaking>"]
    assert (r2.path / "lexicon.tsv").read_bytes() == (
        ws.vocab_dir / "sport" / "build" / "lexicon.tsv"
    ).read_bytes()


def test_replacement_from_recorded_same_as():
    """The old topic's own same_as links (kept in the previous release) name its successor."""
    from conftest import make_topic

    from kgkit.vocab.succession import find_replacements

    gone = {
        "dragon-boat": make_topic(
            "dragon-boat", source=G + "dragon-boat", same_as=[G + "dragon-boat-racing"]
        )
    }
    new = {
        "dragon-boat-racing": make_topic("dragon-boat-racing", source=G + "dragon-boat-racing"),
        "paddling": make_topic("paddling", source=G + "paddling", same_as=[G + "dragon-boat"]),
    }
    # both directions count; of several candidates the lowest id wins
    assert find_replacements(gone, new) == {"dragon-boat": ("dragon-boat-racing", "same-as")}
    new["dragon-boat-racing"] = new["dragon-boat-racing"].deprecate(None)
    assert find_replacements(gone, new) == {"dragon-boat": ("paddling", "same-as")}


def test_input_changed_during_release_is_refused(workspace, monkeypatch):
    spec = setup(workspace, dump(TOPICS_1))
    import kgkit.vocab.compile as comp

    real = comp.compile_vocabulary

    def compile_then_edit(*a, **k):
        res = real(*a, **k)
        with open(workspace.vocab_dir / "sport.curation.yaml", "a", encoding="utf-8") as fh:
            fh.write("  - add_alias: {topic: sport, alias: athletics, language: en}\n")
        return res

    monkeypatch.setattr(comp, "compile_vocabulary", compile_then_edit)
    with pytest.raises(ReleaseError, match="curation changed while the release was made"):
        make_release(workspace, spec)
    assert sorted(p.name for p in (workspace.vocab_dir / "sport").iterdir()) == ["build"]


def test_verify_reports_missing_unlisted_and_edited_manifest(workspace):
    r = make_release(workspace, setup(workspace, dump(TOPICS_1)))
    (r.path / "changelog.md").unlink()
    (r.path / "notes.txt").write_text("hi\n")
    m = json.loads((r.path / "manifest.json").read_text())
    m["files"]["../kgkit.yaml"] = {"sha256": "0" * 64, "bytes": 1}
    (r.path / "manifest.json").write_text(json.dumps(m))
    problems = {(p["file"], p["problem"]) for p in verify_release(r.path).problems}
    assert problems == {
        ("changelog.md", "missing"),
        ("notes.txt", "not listed in the manifest"),
        ("../kgkit.yaml", "not a plain file name"),
        ("manifest.json", "content_sha256 does not match its list of files"),
    }


def test_id_change_from_a_new_clash_is_major(workspace):
    """A second entity with the same local name gives both a hash suffix: the old id
    stays as a deprecated pointer to the new one and the diff calls it an id change."""
    spec = setup(workspace, dump(TOPICS_1))
    make_release(workspace, spec)
    other = "http://example.org/desk/harbour-swim"
    extra = [
        f'<{other}> <{PREF}> "harbour swim (desk)"@en .',
        f'<{other}> <{PREF}> "Hafenschwimmen (Redaktion)"@de .',
        f"<{other}> <{BROADER}> <{G}sport> .",
    ]
    setup(workspace, dump(TOPICS_1, extra), "dump-2.nt")
    r = make_release(workspace, spec)
    t = topics_of(r.path)
    [new_id] = [
        i for i, x in t.items() if x["source"] == G + "harbour-swim" and i != "harbour-swim"
    ]
    assert new_id.startswith("harbour-swim-") and len(new_id) == len("harbour-swim-") + 8
    assert t["harbour-swim"]["status"] == "deprecated"
    assert t["harbour-swim"]["replaced_by"] == new_id
    assert r.version == "2.0.0"
    kinds = [(c.kind, c.ids) for c in r.diff.changes]
    assert ("id-changed", ("harbour-swim", new_id)) in kinds
    assert [k for k, _ in kinds] == ["id-changed", "added"]

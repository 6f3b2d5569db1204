"""Diffs, version rules and changelogs, on topic files crafted per the build contract."""

from __future__ import annotations

import json

import pytest
from conftest import make_topic

from kgkit.release.changelog import changelog_data, changelog_markdown
from kgkit.release.diffing import DiffError, diff_folders, diff_topics
from kgkit.release.versioning import (
    NothingChangedError,
    Version,
    VersionError,
    list_releases,
    next_version,
)
from kgkit.vocab.folder import parse_topics
from kgkit.vocab.writers import BuildFileError, read_topics


def topic(tid, en, parents=(), aliases=None, **kw):
    """A topic as a ``topics.jsonl`` object (a dict the tests change in place)."""
    fields = {
        "aliases": aliases or {},
        "curie": f"ex:{tid}",
        "depth": 0 if not parents else 1,
        "graph": "tidewell",
        "iri": f"http://example.org/vocab/sport/{tid}",
        "labels": {"en": en},
        "parents": sorted(parents),
        "source": f"http://example.org/graph/{tid}",
    }
    fields.update(kw)
    return json.loads(json.dumps(make_topic(tid, **fields).to_json()))


def diff(old, new, *args, **kw):
    """``diff_topics`` on two maps of ``topics.jsonl`` objects."""
    return diff_topics(
        *(parse_topics(map(json.dumps, m.values())) for m in (old, new)), *args, **kw
    )


def base():
    return {
        t["id"]: t
        for t in [
            topic("sport", "sport"),
            topic("paddle-sports", "paddle sports", ["sport"]),
            topic("canoe-polo", "canoe polo", ["paddle-sports"], {"en": ["kayak polo"]}),
            topic("sailing", "sailing", ["sport"]),
        ]
    }


def kinds(d):
    return [(c.kind, c.topic) for c in d.changes]


def test_nothing_changed_lists_nothing():
    d = diff(base(), base())
    assert d.changes == [] and d.is_empty()
    with pytest.raises(NothingChangedError, match="no topic changed since release 1.0.0"):
        next_version(Version(1, 0, 0), d.kinds())
    # explicitly given: allowed, still has to be greater
    assert next_version(Version(1, 0, 0), d.kinds(), "1.0.1") == (Version(1, 0, 1), None)


def test_label_and_alias_changes_are_patch():
    new = base()
    new["sailing"]["labels"] = {"en": "sailing", "de": "Segeln"}
    new["canoe-polo"]["aliases"] = {"en": ["canoe ball"]}
    d = diff(base(), new)
    assert [(c.kind, c.topic, c.language, c.before, c.after) for c in d.changes] == [
        ("relabelled", "sailing", "de", None, "Segeln"),
        ("alias-added", "canoe-polo", "en", None, "canoe ball"),
        ("alias-removed", "canoe-polo", "en", "kayak polo", None),
    ]
    assert next_version(Version(1, 2, 3), d.kinds()) == (Version(1, 2, 4), "patch")


def test_added_or_moved_is_minor():
    new = base()
    new["rowing"] = topic("rowing", "rowing", ["sport"])
    new["sailing"]["parents"] = ["paddle-sports"]
    d = diff(base(), new)
    assert kinds(d) == [("added", "rowing"), ("moved", "sailing")]
    moved = d.changes[1]
    assert moved.before == ["sport"] and moved.after == ["paddle-sports"]
    assert moved.ids == ("paddle-sports", "sailing", "sport")
    assert next_version(Version(1, 2, 3), d.kinds()) == (Version(1, 3, 0), "minor")


def test_removed_deprecated_or_renamed_is_major():
    new = base()
    del new["sailing"]
    new["canoe-polo"].update(status="deprecated", replaced_by="paddle-sports")
    # same source, new id (a clash suffix appeared): an id change, not remove + add
    new["sport-1a2b3c4d"] = dict(new.pop("sport"), id="sport-1a2b3c4d")
    d = diff(base(), new)
    assert kinds(d) == [
        ("removed", "sailing"),
        ("deprecated", "canoe-polo"),
        ("id-changed", "sport-1a2b3c4d"),
    ]
    assert d.changes[1].ids == ("canoe-polo", "paddle-sports")
    assert d.changes[2].before == "sport" and d.changes[2].after == "sport-1a2b3c4d"
    assert next_version(Version(1, 2, 3), d.kinds()) == (Version(2, 0, 0), "major")
    # as a release records it: the old id kept as a deprecated pointer to the new one
    new["sport"] = dict(base()["sport"], status="deprecated", replaced_by="sport-1a2b3c4d")
    new["sport-1a2b3c4d"]["labels"] = {"en": "sports"}
    assert kinds(diff(base(), new)) == [
        ("removed", "sailing"),
        ("deprecated", "canoe-polo"),
        ("id-changed", "sport-1a2b3c4d"),
        ("relabelled", "sport-1a2b3c4d"),
    ]


def test_deprecated_topic_changes_only_its_replacement():
    old = base()
    old["canoe-polo"].update(status="deprecated", replaced_by="paddle-sports")
    new = base()
    new["canoe-polo"].update(status="deprecated", replaced_by="sport", labels={"en": "x"})
    d = diff(old, new)
    assert [(c.kind, c.before, c.after) for c in d.changes] == [
        ("replacement-changed", "paddle-sports", "sport")
    ]
    new["canoe-polo"].update(status="active", replaced_by=None, labels={"en": "canoe polo"})
    assert kinds(diff(old, new)) == [("restored", "canoe-polo")]


def test_attribution_to_curation():
    new = base()
    new["canoe-polo"]["aliases"] = {"en": ["kayak polo", "polo on water"]}
    new["sailing"]["labels"] = {"en": "yachting"}
    new["harbour-races"] = topic("harbour-races", "harbour races", ["sailing"], origin="curation")
    report = {
        "curation": {
            "applied": [
                {"action": "add_alias", "target": "ex:canoe-polo", "alias": "polo on water"}
            ],
            "stale": [],
        }
    }
    d = diff(base(), new, None, report)
    causes = {(c.kind, c.topic): c.cause for c in d.changes}
    assert causes == {
        ("added", "harbour-races"): "curation",
        ("alias-added", "canoe-polo"): "curation",
        ("relabelled", "sailing"): "graph",
    }
    # the edit taken out again: its undoing is the curation's too
    back = diff(new, base(), report, None)
    assert {(c.kind, c.topic): c.cause for c in back.changes}[("alias-removed", "canoe-polo")] == (
        "curation"
    )
    # the same edit applied on both sides explains nothing between them
    d2 = diff(base(), new, report, report)
    assert {(c.kind, c.topic): c.cause for c in d2.changes}[("alias-added", "canoe-polo")] == (
        "graph"
    )


def test_semver_order_matches_reference_library():
    # ordering checked against the `packaging` library (PyPA), whose release-segment
    # order agrees with Semantic Versioning 2.0.0 section 11 for plain X.Y.Z versions
    from packaging.version import Version as Reference

    texts = ["1.0.0", "1.0.10", "1.0.2", "1.10.0", "1.9.9", "2.0.0", "10.0.0", "0.9.0"]
    assert sorted(texts, key=Version.parse) == sorted(texts, key=Reference)
    for bad in ["1.0", "01.0.0", "1.0.0-rc.1", "v1.0.0", "1.0.0+b"]:
        with pytest.raises(VersionError):
            Version.parse(bad)
    with pytest.raises(VersionError, match="not greater than the previous release 2.0.0"):
        next_version(Version(2, 0, 0), ["added"], "1.9.0")
    assert next_version(None, []) == (Version(1, 0, 0), None)


def write_jsonl(folder, topics):
    folder.mkdir(parents=True)
    lines = [json.dumps(topics[i], sort_keys=True, ensure_ascii=False) for i in sorted(topics)]
    (folder / "topics.jsonl").write_text("\n".join(lines) + "\n", encoding="utf-8")
    return folder


def test_diff_folders_and_errors(tmp_path):
    a = write_jsonl(tmp_path / "1.0.0", base())
    new = base()
    new["sailing"]["labels"] = {"en": "sail racing"}
    b = write_jsonl(tmp_path / "build", new)
    d = diff_folders(a, b)
    assert d.to_json()["changes"] == [
        {
            "kind": "relabelled",
            "topic": "sailing",
            "ids": ["sailing"],
            "labels": {"sailing": "sail racing"},
            "cause": "graph",
            "language": "en",
            "before": "sailing",
            "after": "sail racing",
        }
    ]
    assert (
        'relabelled sail racing (sailing) [en]: "sailing" -> "sail racing"  (graph)' in d.to_text()
    )
    (tmp_path / "bad").mkdir()
    (tmp_path / "bad" / "topics.jsonl").write_text('{"id": "a"}\n{"id": \n')
    with pytest.raises(BuildFileError, match=r"bad/topics.jsonl:2: not a JSON object"):
        read_topics(tmp_path / "bad" / "topics.jsonl")
    with pytest.raises(DiffError, match="no topics.jsonl in it"):
        diff_folders(tmp_path, b)
    for v in ("1.0.0", "1.10.0", "1.2.0"):
        (tmp_path / v).mkdir(exist_ok=True)
        (tmp_path / v / "manifest.json").write_text("{}\n")
    (tmp_path / "1.3.0").mkdir()  # no manifest: not a release
    assert [str(v) for v in list_releases(tmp_path)] == ["1.0.0", "1.2.0", "1.10.0"]


def test_changelog_markdown():
    new = base()
    del new["sailing"]
    new["rowing"] = topic("rowing", "rowing", ["sport"])
    d = diff(base(), new)
    version, level = next_version(Version(1, 0, 0), d.kinds())
    stale = [
        {
            "action": "add_alias",
            "edit": 1,
            "file": "sport.curation.yaml",
            "line": 2,
            "target": "ghost",
            "alias": "x",
            "reason": "gone",
        }
    ]
    data = changelog_data("sport", str(version), "1.0.0", d, level, False, stale)
    assert data["counts"] == {"removed": 1, "added": 1}
    assert changelog_markdown(data, d) == (
        "# sport 2.0.0\n\n"
        "Changes since 1.0.0. Version: major (a topic was removed or deprecated, "
        "or an id changed).\n\n"
        "| change | topics |\n|---|---|\n| removed | 1 |\n| added | 1 |\n\n"
        "## Removed\n\n- removed sailing (sailing)  (graph)\n\n"
        "## Added\n\n- added rowing (rowing)  (graph)\n\n"
        "## Curation edits that no longer apply\n\n"
        '- sport.curation.yaml:2: edit 1 (add_alias ghost), alias: "x": gone\n'
    )


def test_attribution_of_merges_and_excluded_subtrees():
    old = base()
    old["dinghy"] = topic("dinghy", "dinghy", ["sailing"])
    old["canoe-polo"]["parents"] = ["paddle-sports", "sailing"]
    new = base()
    del new["sailing"]  # excluded by the curation, with its subtree
    new["canoe-polo"]["parents"] = ["paddle-sports"]  # its parent went with the exclusion
    new["paddle-sports"].update(status="deprecated", replaced_by="sport")  # merged
    new["canoe-polo"]["parents"] = ["sport"]  # reattached to the merge target
    report = {
        "curation": {
            "applied": [
                {"action": "exclude", "edit": 0, "target": "<http://example.org/graph/sailing>"},
                {"action": "merge", "edit": 1, "target": "paddle-sports", "into": "sport"},
            ],
            "stale": [],
        },
        "dropped_topics": [
            {"id": "sailing", "reason": "excluded-by-curation:edit-0", "source": None},
            {"id": "dinghy", "reason": "in-excluded-subtree:sailing", "source": None},
        ],
    }
    d = diff(old, new, None, report)
    assert [(c.kind, c.topic, c.cause) for c in d.changes] == [
        ("removed", "dinghy", "curation"),
        ("removed", "sailing", "curation"),
        ("deprecated", "paddle-sports", "curation"),
        ("moved", "canoe-polo", "curation"),
    ]
    # without the report, the same changes come from the graph
    assert {c.cause for c in diff(old, new).changes} == {"graph"}


def test_new_edit_is_not_hidden_by_an_edit_kept_on_both_sides():
    """An add_alias on canoe polo applied in both releases must not hide that a merge
    (new) hands paddle sports' names to canoe polo: each edit is judged on its own."""
    old, new = base(), base()
    old["canoe-polo"]["aliases"] = {"en": ["kayak polo", "polo on water"]}
    new["canoe-polo"]["aliases"] = {"en": ["kayak polo", "paddle sports", "polo on water"]}
    kept = {"action": "add_alias", "edit": 1, "target": "canoe-polo", "alias": "polo on water"}
    merge = {"action": "merge", "edit": 2, "target": "sailing", "into": "canoe-polo"}
    # the kept edit moved one line down in the file: still the same edit
    moved = {**kept, "edit": 2, "line": 9}
    before = {"curation": {"applied": [kept], "stale": []}}
    after = {"curation": {"applied": [{**merge, "edit": 1}, moved], "stale": []}}
    d = diff(old, new, before, after)
    assert [(c.kind, c.after, c.cause) for c in d.changes] == [
        ("alias-added", "paddle sports", "curation")
    ]
    # without the merge, the graph gave it
    d = diff(old, new, before, {"curation": {"applied": [moved], "stale": []}})
    assert [c.cause for c in d.changes] == ["graph"]


def test_settle_edit_explains_the_name_it_keeps():
    """A settle edit keeps a shared name on the topics it lists: the alias that comes
    back there is the curation's doing (demo: 'netting' kept on net mending)."""
    old, new = base(), base()
    new["sailing"]["aliases"] = {"en": ["boats"]}
    settle = {"action": "settle", "edit": 1, "target": "boats", "keep": ["ex:sailing"]}
    d = diff(old, new, None, {"curation": {"applied": [settle], "stale": []}})
    assert [(c.kind, c.topic, c.cause) for c in d.changes] == [
        ("alias-added", "sailing", "curation")
    ]
    d = diff(old, new, None, None)
    assert [c.cause for c in d.changes] == ["graph"]


def test_restored_topic_is_not_compared_with_its_deprecated_record():
    """A deprecated record has no parents and no aliases: a restored topic is not
    'moved' nor given 'alias-added' lines against it. When the same entity was active
    under the id that replaced it (a clash suffix gone again), it is compared with that."""
    old, new = base(), base()
    old["canoe-polo"].update(status="deprecated", replaced_by=None, parents=[], aliases={})
    old["canoe-polo"]["depth"] = None
    assert kinds(diff(old, new)) == [("restored", "canoe-polo")]
    suffixed = topic(
        "canoe-polo-1a2b3c4d",
        "canoe polo",
        ["paddle-sports"],
        {"en": ["kayak polo"]},
        source=old["canoe-polo"]["source"],
    )
    old["canoe-polo"]["replaced_by"] = suffixed["id"]
    old[suffixed["id"]] = suffixed
    new[suffixed["id"]] = {**suffixed, "status": "deprecated", "replaced_by": "canoe-polo"}
    new[suffixed["id"]].update(parents=[], aliases={}, depth=None)
    new["canoe-polo"]["aliases"] = {"en": ["kayak polo", "water polo in boats"]}
    assert [(c.kind, c.topic, c.after) for c in diff(old, new).changes] == [
        ("deprecated", suffixed["id"], "canoe-polo"),
        ("restored", "canoe-polo", None),
        ("alias-added", "canoe-polo", "water polo in boats"),
    ]

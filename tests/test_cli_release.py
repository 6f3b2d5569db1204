"""``kgkit release``, ``verify``, ``diff`` and ``lint`` on the command line: the release
cycle as the README shows it."""

from __future__ import annotations

import json

from test_release import CURATION, REDIRECT, SPEC, TOPICS_1, dump, topics_2


def _import(kgkit, workspace, text, name):
    path = workspace.root / name
    path.write_text(text, encoding="utf-8")
    r = kgkit("import", str(path), "--graph", "tidewell", "--quiet")
    assert r.exit_code == 0, r.output


def last_json(output):
    return json.loads(output.strip().splitlines()[-1])


def test_release_cycle_from_the_shell(kgkit, workspace):
    spec = workspace.vocab_dir / "sport.yaml"
    spec.write_text(SPEC, encoding="utf-8")
    (workspace.vocab_dir / "sport.curation.yaml").write_text(CURATION, encoding="utf-8")
    home = workspace.vocab_dir / "sport"

    _import(kgkit, workspace, dump(TOPICS_1), "dump-1.nt")
    r = kgkit("release", str(spec), "--json")
    assert r.exit_code == 0, r.output
    s = last_json(r.output)
    assert s["version"] == "1.0.0" and s["path"] == str(home / "1.0.0")
    assert s["previous"] is None and s["deprecated"] == []

    _import(kgkit, workspace, dump(topics_2(), REDIRECT), "dump-2.nt")
    r = kgkit("compile", str(spec), "--quiet")
    assert r.exit_code == 0, r.output
    d = kgkit("diff", str(home / "1.0.0"), str(home / "build"), "--json")
    assert d.exit_code == 0, d.output
    changes = last_json(d.output)["changes"]
    # the compile follows on release 1: the build keeps dragon-boat, deprecated, with
    # the topic its redirect names as replacement
    assert [(c["kind"], c["ids"]) for c in changes] == [
        ("deprecated", ["dragon-boat", "dragon-boat-racing"]),
        ("added", ["dragon-boat-racing"]),
        ("added", ["sea-kayaking"]),
        ("moved", ["harbour-swim", "sport", "water-sports"]),
        ("relabelled", ["beach-volleyball"]),
    ]

    r = kgkit("release", str(spec))
    assert r.exit_code == 0, r.output
    assert r.output.splitlines() == [
        f"released sport 2.0.0 (after 1.0.0, major) in {home / '2.0.0'}",
        "  deprecated 1, added 2, moved 1, relabelled 1",
        "  deprecated dragon boat (dragon-boat) -> dragon boat racing (dragon-boat-racing)",
        '  1 name no longer matched by any topic: "beach volleyball" (see changelog.md)',
    ]
    d = kgkit("diff", str(home / "1.0.0"), str(home / "2.0.0"))
    assert d.exit_code == 0
    assert d.output.splitlines()[:2] == [
        f"{home / '1.0.0'} -> {home / '2.0.0'}: 5 changes",
        "  deprecated           1",
    ]
    assert (
        "deprecated dragon boat (dragon-boat), replaced by dragon boat racing "
        "(dragon-boat-racing)  (graph)" in d.output
    )

    v = kgkit("verify", str(home / "2.0.0"))
    assert v.exit_code == 0 and v.output == f"{home / '2.0.0'}: release 2.0.0 intact (7 files)\n"
    kept = (home / "2.0.0" / "topics.yaml").read_bytes()
    (home / "2.0.0" / "topics.yaml").write_text("topics: []\n", encoding="utf-8")
    v = kgkit("verify", str(home / "2.0.0"))
    assert v.exit_code == 1
    assert v.output.startswith("topics.yaml: changed (sha256 ")
    assert v.output.endswith(f"{home / '2.0.0'}: 1 problem\n")
    v = kgkit("verify", str(home / "2.0.0"), "--json")
    assert last_json(v.output)["problems"][0]["file"] == "topics.yaml"
    r = kgkit("release", str(spec), "--as-version", "9.0.0")
    assert r.exit_code == 1 and r.output.startswith(f"Error: {home / '2.0.0' / 'topics.yaml'}: ")
    assert len(r.output.splitlines()) == 1 and "9.0.0" not in {p.name for p in home.iterdir()}
    (home / "2.0.0" / "topics.yaml").write_bytes(kept)

    lint = kgkit("lint", str(home / "1.0.0"), "--json")
    assert lint.exit_code == 0, lint.output
    assert last_json(lint.output)["counts"]["error"] == 0

    # nothing changed: refused with one line; --as-version must be greater
    r = kgkit("release", str(spec))
    assert r.exit_code == 1
    assert r.output == (
        "Error: no topic changed since release 2.0.0; nothing to release "
        "(give --as-version X.Y.Z to release anyway)\n"
    )
    r = kgkit("release", str(spec), "--as-version", "2.0")
    assert r.exit_code == 1 and "is not a release version" in r.output
    r = kgkit("release", str(spec), "--as-version", "3.0.0", "--json")
    assert r.exit_code == 0 and last_json(r.output)["version"] == "3.0.0"
    assert sorted(p.name for p in home.iterdir()) == ["1.0.0", "2.0.0", "3.0.0", "build"]


def test_verify_and_diff_errors(kgkit, workspace):
    r = kgkit("verify", str(workspace.root))
    assert r.exit_code == 1
    assert (
        r.output
        == f"Error: {workspace.root / 'manifest.json'}: no manifest; not a release folder\n"
    )
    r = kgkit("diff", str(workspace.root), str(workspace.root))
    assert r.exit_code == 1 and "no topics.jsonl in it" in r.output

"""``kgkit compile``: summary, --json, --quiet, spec errors."""

from __future__ import annotations

import json
import shutil

from conftest import DATA


def _setup(kgkit, workspace, case="sport"):
    folder = DATA / f"vocab-{case}"
    r = kgkit("import", str(folder / "graph.nt"), "--graph", "tidewell", "--quiet")
    assert r.exit_code == 0, r.output
    for f in folder.glob("*.yaml"):
        shutil.copy(f, workspace.vocab_dir / f.name)
    return str(workspace.vocab_dir / "sport.yaml")


def test_compile_prints_a_summary_and_json_last(kgkit, workspace):
    spec = _setup(kgkit, workspace)
    r = kgkit("compile", spec, "--json", "--quiet")
    assert r.exit_code == 0, r.output
    summary = json.loads(r.output.strip().splitlines()[-1])
    for key in ("topics", "aliases", "dropped", "cycles_broken", "ambiguous_keys", "output"):
        assert key in summary
    assert summary["topics"] == 4 and summary["cycles_broken"] == 0
    assert summary["output"] == str(workspace.vocab_dir / "sport" / "build")
    r = kgkit("compile", spec)
    assert r.exit_code == 0
    assert r.output.splitlines() == [
        "compiled sport: 4 topics, 1 alias, 0 topics and 2 aliases dropped, "
        "0 cycle links broken, 0 ambiguous keys",
        f"wrote {workspace.vocab_dir / 'sport' / 'build'}",
    ]


def test_spec_errors_are_one_line_naming_key_and_file(kgkit, workspace):
    spec = workspace.vocab_dir / "bad.yaml"
    cases = {
        "name: x\nnamespace: http://e.org/x/\nselect: [{template: descendants, "
        'params: {root: "ex:a"}}]\n': "bad.yaml:3: key 'select[0].params.root'",
        "name: x\nnamespace: http://e.org/x/\nselect: [{template: nope}]\n": (
            "bad.yaml:3: key 'select[0].template': unknown template 'nope'"
        ),
        "name: x\nnamespace: http://e.org/x/\ncolour: red\nselect: []\n": (
            "bad.yaml:3: key 'colour': unknown key"
        ),
        "name: x\nnamespace: http://e.org/x/\nselect: [{template: descendants, "
        "params: {root: '<http://e.org/a>'}}]\nprune:\n  max_depth: deep\n": (
            "bad.yaml:5: key 'prune.max_depth': must be an integer >= 0, got 'deep'"
        ),
        "name: x\nnamespace: http://e.org/x/\nselect: [{template: descendants, "
        "params: {root: '<http://e.org/a>'}}]\naliases: {ambiguous: maybe}\n": (
            "bad.yaml:4: key 'aliases.ambiguous': must be one of keep | drop | preferred-only"
        ),
    }
    for text, expected in cases.items():
        spec.write_text(text, encoding="utf-8")
        r = kgkit("compile", str(spec))
        assert r.exit_code == 1, (text, r.output)
        lines = r.output.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("Error: ") and expected in lines[0], (
            text,
            r.output,
        )
    assert not (workspace.vocab_dir / "x").exists()


def test_failed_compile_leaves_the_previous_build(kgkit, workspace):
    spec = _setup(kgkit, workspace)
    assert kgkit("compile", spec, "--quiet").exit_code == 0
    build = workspace.vocab_dir / "sport" / "build"
    before = {p.name: p.read_bytes() for p in build.iterdir()}
    (workspace.vocab_dir / "sport.curation.yaml").write_text(
        "edits:\n  - add_alias: {topic: nowhere, alias: x}\n", encoding="utf-8"
    )
    r = kgkit("compile", spec, "--strict")
    assert r.exit_code == 1 and "is stale" in r.output
    assert {p.name: p.read_bytes() for p in build.iterdir()} == before
    assert sorted(p.name for p in build.parent.iterdir()) == ["build"]

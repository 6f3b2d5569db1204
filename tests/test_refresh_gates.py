"""Each release gate, met the way an owner meets it on a refresh, through the command line.

`tests/test_release_gates.py` checks the gates' wording on hand-built vocabularies and a few
of them end to end; this file runs every gate through ``kgkit import`` + ``kgkit release`` on
the invented Kilnmoor craft archive (``tests/data/refresh-release-1``) and holds each
refusal to the same account: exit code 1, a summary line and then one line per problem
(``  GATE: ...``), and nothing new under ``vocab/crafts/`` but ``build/`` (no release
folder, no temporary folder, the earlier releases untouched and still verifying). Then the
override (``--waive GATE --reason WHY``) releases anyway, and the manifest and both
changelogs record the gate, the reason and its problems.
"""

from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pytest
from refresh_support import DATA, RELEASE_1, K, copied_workspace, released_1  # noqa: F401


def _snapshot(home: Path) -> dict[str, bytes]:
    """Every file under vocab/crafts/ except the build, with its bytes."""
    if not home.exists():
        return {}
    return {
        str(p.relative_to(home)): p.read_bytes()
        for p in sorted(home.rglob("*"))
        if p.is_file() and p.relative_to(home).parts[0] != "build"
    }


class Owner:
    """The owner's workspace: the spec and curation file of release 1, the graph imported,
    release 1.0.0 made."""

    def __init__(self, kgkit, workspace):
        self.kgkit, self.ws = kgkit, workspace
        self.spec = workspace.vocab_dir / "crafts.yaml"
        self.curation = workspace.vocab_dir / "crafts.curation.yaml"
        self.home = workspace.vocab_dir / "crafts"

    def load(self, dump: Path) -> None:
        r = self.kgkit("import", str(dump), "--graph", "kilnmoor")
        assert r.exit_code == 0, r.output

    def release(self, *args):
        return self.kgkit("release", str(self.spec), *args)

    def release_1(self) -> None:
        """Release 1.0.0 is there and verifies."""
        v = self.kgkit("verify", str(self.home / "1.0.0"))
        assert v.exit_code == 0, v.output

    def unreleased(self) -> None:
        """Back to a vocabulary never released (the graph stays imported)."""
        shutil.rmtree(self.home)

    def refused(self) -> list[str]:
        """Release, expect a refusal; returns the problem lines (without their indent)."""
        before = _snapshot(self.home)
        names = sorted(p.name for p in self.home.iterdir()) if self.home.exists() else []
        r = self.release()
        assert r.exit_code == 1, r.output
        head, *lines = r.output.splitlines()
        m = re.fullmatch(
            rf"Error: {re.escape(str(self.spec))}: (\d+) release gate problems?; nothing released "
            r"\(--waive GATE with --reason WHY releases anyway\)",
            head,
        )
        assert m, head
        assert len(lines) == int(m.group(1)), r.output  # one line per problem, nothing else
        assert all(re.match(r"  [a-z-]+: \S", ln) for ln in lines), lines
        # nothing written but the build: no release, no temporary folder left behind
        after = sorted(p.name for p in self.home.iterdir())
        assert set(after) - set(names) <= {"build"}, after
        assert _snapshot(self.home) == before
        for version in after:
            if version != "build":
                v = self.kgkit("verify", str(self.home / version))
                assert v.exit_code == 0, v.output
        return [ln[2:] for ln in lines]

    def waived(self, gates: list[str], reason: str, *more: str) -> Path:
        """Release past ``gates`` with ``reason`` (and ``more`` options); checks what the
        release records."""
        args = [a for g in gates for a in ("--waive", g)]
        r = self.release(*args, "--reason", reason, *more)
        assert r.exit_code == 0, r.output
        for g in gates:
            assert f"  gate {g} waived: {reason}" in r.output.splitlines(), r.output
        [path] = [
            Path(ln.rsplit(" in ", 1)[1])
            for ln in r.output.splitlines()
            if ln.startswith("released crafts ")
        ]
        manifest = json.loads((path / "manifest.json").read_text(encoding="utf-8"))
        overrides = manifest["overrides"]
        assert [o["gate"] for o in overrides] == gates
        assert all(o["reason"] == reason and o["problems"] for o in overrides)
        cl = json.loads((path / "changelog.json").read_text(encoding="utf-8"))
        assert cl["waived_gates"] == overrides
        md = (path / "changelog.md").read_text(encoding="utf-8")
        block = md.split("## Release gates waived\n\n", 1)[1].split("\n\n", 1)[0].splitlines()
        for o in overrides:
            i = block.index(f"- {o['gate']}, because: {reason}")
            assert block[i + 1 : i + 1 + len(o["problems"])] == [f"  - {p}" for p in o["problems"]]
        v = self.kgkit("verify", str(path))
        assert v.exit_code == 0, v.output
        return path


@pytest.fixture
def owner(kgkit, workspace):
    return Owner(kgkit, workspace)


def _edit(path: Path, old: str, new: str) -> None:
    text = path.read_text(encoding="utf-8")
    assert old in text
    path.write_text(text.replace(old, new), encoding="utf-8")


def test_root_without_descendants_refuses_first_release_with_no_topics(owner):
    owner.unreleased()
    # a leaf as root, without include_root: the selection is empty
    _edit(owner.spec, f"<{K}crafts>", f"<{K}spoon-carving>")
    _edit(owner.spec, "include_root: true", "include_root: false")
    assert owner.refused() == ["no-topics: the vocabulary has no active topic"]
    assert sorted(p.name for p in owner.home.iterdir()) == ["build"]
    path = owner.waived(["no-topics"], "checking the pipeline on an empty selection")
    assert path.name == "1.0.0"


def test_entity_that_lost_every_name_refuses_release_with_no_label(owner):
    owner.release_1()
    owner.load(DATA / "refresh-gate-names-lost" / "kilnmoor-2.nt")
    assert owner.refused() == [
        "no-label: 1 active topic without any preferred label (is the entity still in the "
        f"graph?): basketry (<{K}basketry>)"
    ]
    owner.waived(["no-label"], "the upstream fix lands next week")


def test_label_lost_in_a_required_language_refuses_release(owner):
    owner.release_1()
    owner.load(DATA / "refresh-gate-german-label-lost" / "kilnmoor-2.nt")
    assert owner.refused() == [
        "missing-language: 1 active topic without a preferred label in 'de' "
        "(languages.required): pottery (pottery)"
    ]
    owner.waived(["missing-language"], "the German desk adds it by curation next")


def test_control_character_in_a_label_refuses_release_by_lint(owner):
    owner.release_1()
    owner.load(DATA / "refresh-gate-control-character" / "kilnmoor-2.nt")
    [line] = owner.refused()
    assert line.startswith("lint-error: lint check control-character-in-label fires 1 time on ")
    assert "(slip-casting)" in line
    owner.waived(["lint-error"], "annotators strip control characters themselves")


def test_exclude_entity_no_graph_mentions_refuses_release_with_nearest_name(owner):
    owner.release_1()
    with open(owner.spec, "a", encoding="utf-8") as fh:
        fh.write(f"exclude: ['<{K}wilow-work>']\n")
    [line] = owner.refused()
    assert line.startswith(
        f"unknown-entity: {owner.spec}:13: exclude[0] '<{K}wilow-work>': no graph mentions it"
    ), line
    # the nearest name first, the way kgkit find ranks it
    assert f"; nearest: willow work (<{K}willow-work>)" in line, line
    # waived: the exclude changes nothing, so the owner names the version
    path = owner.waived(["unknown-entity"], "the entity is due in the next dump", "--as-version",
                        "1.0.1")  # fmt: skip
    assert path.name == "1.0.1"


def test_curation_merge_into_a_topic_nobody_has_refuses_release_with_nearest_name(owner):
    owner.release_1()
    with open(owner.curation, "a", encoding="utf-8") as fh:
        fh.write("  - merge: {topic: rag-rugs, into: weavng}\n")
    [line] = owner.refused()
    assert line.startswith(
        f"unknown-entity: {owner.curation}:11: edit 5 (merge) into 'weavng': no topic has "
        "this id and no graph entity would get it; nearest: weaving (weaving)"
    ), line


def _cut_short(tmp_path: Path) -> Path:
    """Release 1's dump cut short at a line end after its first 22 lines (6 of 13 topics)."""
    lines = (RELEASE_1 / "kilnmoor-1.nt").read_text(encoding="utf-8").splitlines(keepends=True)
    cut = tmp_path / "kilnmoor-cut.nt"
    cut.write_text("".join(lines[:22]), encoding="utf-8")
    return cut


def test_dump_cut_short_refuses_release_by_topic_loss(owner, tmp_path):
    owner.release_1()
    owner.load(_cut_short(tmp_path))
    [line] = owner.refused()
    assert line.startswith(
        "topic-loss: 7 of the 13 active topics of release 1.0.0 are gone without a "
        "replacement (54%, more than the 10% release.max_topic_loss allows; was the dump "
        "cut short?): "
    ), line
    assert "basketry (basketry)" in line
    path = owner.waived(["topic-loss"], "the archive drops those desks")
    assert path.name == "2.0.0"


def test_several_gates_one_line_each_and_waiving_one_still_refuses(owner):
    owner.release_1()
    owner.load(DATA / "refresh-gate-german-label-lost" / "kilnmoor-2.nt")
    with open(owner.spec, "a", encoding="utf-8") as fh:
        fh.write(f"include: ['<{K}bowl-turnin>']\n")
    lines = owner.refused()
    gates = [ln.split(":", 1)[0] for ln in lines]
    assert "missing-language" in gates and "unknown-entity" in gates
    [unknown] = [ln for ln in lines if ln.startswith("unknown-entity: ")]
    assert f"include[0] '<{K}bowl-turnin>': no graph mentions it; nearest: bowl turning " in (
        unknown
    ), unknown
    # waiving one gate is not waiving them all
    r = owner.release("--waive", "missing-language", "--reason", "known")
    assert r.exit_code == 1 and "unknown-entity: " in r.output
    assert all(not ln.startswith("  missing-language") for ln in r.output.splitlines())
    assert sorted(p.name for p in owner.home.iterdir()) == ["1.0.0", "build"]


def test_dump_cut_short_releases_when_the_spec_allows_that_share(owner, tmp_path):
    """release.max_topic_loss in the spec is the owner's own limit: no waiver needed."""
    owner.release_1()
    owner.load(_cut_short(tmp_path))
    with open(owner.spec, "a", encoding="utf-8") as fh:
        fh.write("release: {max_topic_loss: 0.5}\n")
    assert owner.refused()[0].startswith("topic-loss: 7 of the 13 active topics")  # 54 % > 50 %
    _edit(owner.spec, "max_topic_loss: 0.5", "max_topic_loss: 0.6")
    r = owner.release()
    assert r.exit_code == 0, r.output
    manifest = json.loads((owner.home / "2.0.0" / "manifest.json").read_text(encoding="utf-8"))
    assert "overrides" not in manifest

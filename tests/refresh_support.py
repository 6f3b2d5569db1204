"""Support for the refresh tests (no tests here): the invented Kilnmoor craft archive with
release 1.0.0 made once per test module, a copy of that workspace for each test, and
release folders read the way an annotator's loader reads them (plain ``csv`` and
``json``, never kgkit's own readers), with issue 10's invariant checked on two of them."""

from __future__ import annotations

import csv
import json
import re
import shutil
from pathlib import Path

import pytest

DATA = Path(__file__).resolve().parent / "data"
#: the dump, spec and curation file of release 1
RELEASE_1 = DATA / "refresh-release-1"
K = "http://example.org/kilnmoor/"


@pytest.fixture(scope="module")
def released_1(tmp_path_factory) -> Path:
    """A workspace holding release 1.0.0 of the Kilnmoor archive, made once per module
    through the command line (import into graph ``kilnmoor``, then release)."""
    from click.testing import CliRunner

    from kgkit.cli import cli
    from kgkit.workspace import init_workspace

    ws = init_workspace(tmp_path_factory.mktemp("refresh") / "ws")
    for name in ("crafts.yaml", "crafts.curation.yaml"):
        shutil.copy(RELEASE_1 / name, ws.vocab_dir / name)
    runner = CliRunner()
    for args in (
        ["import", str(RELEASE_1 / "kilnmoor-1.nt"), "--graph", "kilnmoor"],
        ["release", str(ws.vocab_dir / "crafts.yaml")],
    ):
        r = runner.invoke(cli, ["--workspace", str(ws.root), *args])
        assert r.exit_code == 0, r.output
    assert (ws.vocab_dir / "crafts" / "1.0.0" / "manifest.json").is_file()
    return ws.root


@pytest.fixture(name="workspace")
def copied_workspace(released_1, tmp_path):
    """Overrides conftest's ``workspace``: a copy of the one holding release 1 (its store
    closed), so that the ``kgkit`` fixture runs commands in it."""
    from kgkit.workspace import load_workspace

    root = tmp_path / "ws"
    shutil.copytree(released_1, root, symlinks=True)
    return load_workspace(root)


#: what an annotator's loader relies on (issue 10, "Names the acceptance checks rely on")
LEXICON_COLUMNS = ["alias", "match_key", "topic", "language", "kind", "shared_by"]


# --- reading a release folder the way an annotator's loader would -----------------


def lexicon(folder: Path) -> list[dict]:
    with open(folder / "lexicon.tsv", encoding="utf-8", newline="") as fh:
        reader = csv.reader(fh, delimiter="\t", quoting=csv.QUOTE_NONE)
        header = next(reader)
        assert header[: len(LEXICON_COLUMNS)] == LEXICON_COLUMNS, header
        rows = [dict(zip(header, r, strict=True)) for r in reader]
    assert rows, f"{folder}/lexicon.tsv has no rows"
    for r in rows:
        assert r["alias"] and r["match_key"] and r["topic"] and r["kind"], r
        assert int(r["shared_by"]) >= 1, r
    return rows


def topics(folder: Path) -> dict[str, dict]:
    out = {}
    for n, line in enumerate((folder / "topics.jsonl").read_text(encoding="utf-8").splitlines()):
        t = json.loads(line)
        assert {"id", "status", "replaced_by"} <= t.keys(), f"topics.jsonl:{n + 1}: {t}"
        assert t["status"] in ("active", "deprecated"), t
        if t["status"] == "active":
            assert t["replaced_by"] is None, t
        out[t["id"]] = t
    ids = list(out)
    assert ids == sorted(ids), "topics.jsonl is not sorted by id"
    return out


def keys_by_topic(rows: list[dict]) -> dict[str, set[str]]:
    out: dict[str, set[str]] = {}
    for r in rows:
        out.setdefault(r["topic"], set()).add(r["match_key"])
    return out


def label(t: dict) -> str:
    """The label a person reads for a topic of these tests (the spec's first language)."""
    return t["labels"]["en"]


def follow(tid: str, by_id: dict[str, dict]) -> str | None:
    """The active topic a deprecated one leads to (through a chain), or None."""
    seen = set()
    while tid is not None and tid not in seen:
        seen.add(tid)
        t = by_id.get(tid)
        if t is None:
            return None
        if t["status"] == "active":
            return tid
        tid = t["replaced_by"]
    return None


def section(md: str, title: str) -> list[str]:
    """The bullet lines of one ``## title`` section of changelog.md."""
    m = re.search(rf"^## {re.escape(title)}\n(.*?)(?=^## |\Z)", md, re.M | re.S)
    return [ln for ln in m.group(1).splitlines() if ln.startswith("- ")] if m else []


def names_not_followed(old: Path, new: Path) -> list[str]:
    """The invariant, checked from the files alone; returns what breaks it (empty: holds).

    For each row of release N's lexicon: in release N+1 the topic (or, when deprecated,
    its active replacement) still has the match key, or changelog.md lists the name as
    no longer matching it, on one line with the name, its language, the topic's label and
    id, and a reason (``- "NAME" [LANG], was a name of LABEL (ID): REASON``).
    """
    old_topics, new_topics = topics(old), topics(new)
    now = keys_by_topic(lexicon(new))
    # any section may list it (a name another topic took over is not "lost" to annotators,
    # but the owner must still see that it stopped matching its topic)
    lost = [
        ln
        for ln in (new / "changelog.md").read_text(encoding="utf-8").splitlines()
        if ln.startswith("- ")
    ]
    broken = []
    for row in lexicon(old):
        tid, key = row["topic"], row["match_key"]
        if tid not in new_topics:
            broken.append(f"{tid}: a topic of {old.name} is missing from {new.name}/topics.jsonl")
            continue
        target = follow(tid, new_topics)
        if target is not None and key in now.get(target, ()):
            continue
        shown = f"{label(old_topics[tid])} ({tid})"
        lang = row["language"] or "untagged"
        listed = [
            ln
            for ln in lost
            if ln.startswith(f"- {json.dumps(row['alias'], ensure_ascii=False)} [{lang}],")
            and f"was a name of {shown}: " in ln
            and ln.rsplit(": ", 1)[1].strip()
        ]
        if not listed:
            where = f"its replacement {target}" if target not in (None, tid) else "its topic"
            broken.append(
                f"{row['alias']!r} [{lang}] of {shown}: key {key!r} is no key of {where} in "
                f"{new.name} and changelog.md does not list it as no longer matched"
            )
    return broken

"""What a person reads about a release names each topic by label beside its id:
the changelog (Markdown and JSON), the diff, and the names annotators lose."""

from __future__ import annotations

import json

from test_release import REDIRECT, TOPICS_1, dump, setup, topics_2

from kgkit.release.diffing import diff_folders
from kgkit.release.release import make_release


def test_changelog_names_topics_by_label_and_lists_lost_and_carried_names(workspace):
    spec = setup(workspace, dump(TOPICS_1))
    make_release(workspace, spec)
    setup(workspace, dump(topics_2(), REDIRECT), "dump-2.nt")
    r2 = make_release(workspace, spec)
    md = (r2.path / "changelog.md").read_text(encoding="utf-8").splitlines()
    assert (
        "- deprecated dragon boat (dragon-boat), replaced by dragon boat racing "
        "(dragon-boat-racing)  (graph)"
    ) in md
    assert "- added sea kayaking (sea-kayaking)  (graph)" in md
    assert (
        "- moved harbour swim (harbour-swim): parents [water sports (water-sports)] -> "
        "[sport (sport)]  (graph)"
    ) in md
    # the relabelled topic's old label matches no topic now: listed by the name itself
    i = md.index("## Names no longer matched")
    assert md[i + 4] == (
        '- "beach volleyball" [en], was a name of beach volleyball (beach-volleyball): '
        "no-longer-given"
    )
    j = md.index("## Names carried to a replacement")
    assert (
        '- "dragon boat" [en] from dragon boat (dragon-boat) to dragon boat racing '
        "(dragon-boat-racing): kept"
    ) in md[j:]
    cl = json.loads((r2.path / "changelog.json").read_text(encoding="utf-8"))
    dep = next(c for c in cl["changes"] if c["kind"] == "deprecated")
    assert dep["labels"] == {
        "dragon-boat": "dragon boat",
        "dragon-boat-racing": "dragon boat racing",
    }
    assert [n["name"] for n in cl["names_lost"]] == ["beach volleyball"]


def test_topic_deleted_without_replacement_lists_every_name_annotators_lose(workspace):
    spec = setup(workspace, dump(TOPICS_1))
    spec.write_text(spec.read_text() + "release: {max_topic_loss: 0.2}\n", encoding="utf-8")
    make_release(workspace, spec)
    setup(workspace, dump({k: v for k, v in TOPICS_1.items() if k != "dragon-boat"}), "d2.nt")
    spec.write_text(spec.read_text() + "release: {max_topic_loss: 0.2}\n", encoding="utf-8")
    r2 = make_release(workspace, spec)
    md = (r2.path / "changelog.md").read_text(encoding="utf-8")
    lost = md.split("## Names no longer matched\n\n", 1)[1].split("\n\n## ", 1)[0].splitlines()
    assert lost[2:] == [
        '- "Drachenboot" [de], was a name of dragon boat (dragon-boat): '
        "deprecated-without-replacement",
        '- "dragon boat" [en], was a name of dragon boat (dragon-boat): '
        "deprecated-without-replacement",
        '- "dragon boating" [en], was a name of dragon boat (dragon-boat): '
        "deprecated-without-replacement",  # the curated alias too
    ]
    text = diff_folders(r2.path.parent / "1.0.0", r2.path).to_text()
    assert "deprecated dragon boat (dragon-boat), replaced by (nothing)  (graph)" in text

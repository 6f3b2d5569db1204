"""Release gates: each test is named after the fault that makes a gate refuse.

Unit tests build :class:`kgkit.vocab.model.Vocabulary` values by hand (invented
Tidewell sports data); the tests at the end run a real compile and release.
"""

from __future__ import annotations

import json

import pytest
from test_release import CURATION, SPEC, TOPICS_1, dump, setup

from kgkit.errors import ArgumentError, GateError
from kgkit.release.gates import (
    GATES,
    check_labels,
    check_lint,
    check_topic_loss,
    topic_text,
)
from kgkit.release.manifest import verify_release
from kgkit.release.release import make_release
from kgkit.vocab.folder import vocabulary_files
from kgkit.vocab.model import Scheme, TopicRecord, Vocabulary

G = "http://example.org/graph/"
NS = "http://example.org/vocab/sport/"
SCHEME = Scheme(NS.rstrip("/"), "sport", NS, "Tidewell sport topics")


def vocab(*topics, languages=("en", "de")):
    return Vocabulary(SCHEME, tuple(sorted(topics, key=lambda t: t.id)), languages=languages)


def topic(tid, en=None, de=None, **kw):
    labels = {k: v for k, v in (("en", en), ("de", de)) if v is not None}
    return TopicRecord.make(tid, labels=labels, iri=NS + tid, **kw)


def gates_of(problems):
    return [p.gate for p in problems]


def test_empty_vocabulary_fails_no_topics_gate():
    assert [str(p) for p in check_labels(vocab())] == [
        "the vocabulary has no active topic [gate no-topics]"
    ]
    only_deprecated = vocab(topic("sport", "sport", "Sport").deprecate(None))
    assert gates_of(check_labels(only_deprecated)) == ["no-topics"]


def test_topic_without_any_label_fails_no_label_gate():
    v = vocab(
        topic("sport", "sport", "Sport"),
        topic("ghost", curie="tw:ghost", source=G + "ghost"),
    )
    [p] = check_labels(v)
    assert p.gate == "no-label"
    assert p.message == (
        "1 active topic without any preferred label (is the entity still in the graph?): "
        "ghost (tw:ghost)"
    )


def test_topic_without_required_language_fails_missing_language_gate():
    v = vocab(
        topic("sport", "sport", "Sport"),
        topic("canoe-polo", "canoe polo"),
        topic("sea-kayaking", "sea kayaking"),
    )
    assert check_labels(v, ["en"]) == []
    [p] = check_labels(v, ["en", "de"])
    assert p.gate == "missing-language"
    assert p.message == (
        "2 active topics without a preferred label in 'de' (languages.required): "
        "canoe polo (canoe-polo), sea kayaking (sea-kayaking)"
    )
    # a regional tag is a label in its language (RFC 4647 basic filtering)
    v2 = vocab(TopicRecord.make("sport", labels={"de-AT": "Sport"}, iri=NS + "sport"))
    assert check_labels(v2, ["de"]) == []


def test_many_topics_are_named_up_to_five_then_counted():
    v = vocab(*(topic(f"t{i}", f"topic {i}") for i in range(8)))
    [p] = check_labels(v, ["de"])
    assert p.message.endswith("topic 4 (t4) and 3 more")


def test_blank_label_fails_lint_error_gate():
    v = vocab(topic("sport", "sport", "Sport"), topic("swim", " ", "Schwimmen", parents=["sport"]))
    problems = check_lint(v)
    assert gates_of(problems) == ["lint-error"]
    assert problems[0].message.startswith("lint check blank-label fires 1 time on ")
    assert "(swim)" in problems[0].message
    good = vocab(
        topic("sport", "sport", "Sport"), topic("swim", "swim", "Schwimmen", parents=["sport"])
    )
    assert check_lint(good) == []


def _previous(n):
    return vocab(*(topic(f"t{i:02}", f"topic {i}", f"Thema {i}") for i in range(n)))


def test_losing_more_than_the_share_fails_topic_loss_gate():
    prev = _previous(20)
    cut = vocab(*(t for t in prev.topics[:17]))  # 3 of 20 gone: 15 %
    [p] = check_topic_loss(cut, prev, 0.1, "release 1.0.0")
    assert p.gate == "topic-loss"
    assert p.message.startswith(
        "3 of the 20 active topics of release 1.0.0 are gone without a replacement "
        "(15%, more than the 10% release.max_topic_loss allows; was the dump cut short?): "
        "topic 17 (t17), topic 18 (t18), topic 19 (t19)"
    )
    assert check_topic_loss(cut, prev, 0.15) == []  # the spec allows it
    two_gone = vocab(*(t for t in prev.topics[:18]))
    assert check_topic_loss(two_gone, prev, 0.1) == []  # exactly 10 %: allowed


def test_deprecated_with_an_active_replacement_is_not_lost():
    prev = _previous(10)
    t = prev.topics
    # t08 replaced by t09 directly, t07 through a chain t07 -> t08 -> t09
    now = vocab(*t[:7], t[7].deprecate("t08"), t[8].deprecate("t09"), t[9])
    assert check_topic_loss(now, prev, 0.0) == []
    # a replacement that is itself gone does not save it
    now = vocab(*t[:8], t[8].deprecate("t99"), t[9])
    [p] = check_topic_loss(now, prev, 0.0)
    assert p.message.startswith("1 of the 10 active topics")


def test_topic_text_shows_label_beside_id():
    assert topic_text("dragon boat", "dragon-boat") == "dragon boat (dragon-boat)"
    assert set(GATES) == {
        "no-topics",
        "no-label",
        "missing-language",
        "lint-error",
        "unknown-entity",
        "topic-loss",
    }


# --- a real compile and release ---------------------------------------------------


def _home(ws):
    return sorted(p.name for p in (ws.vocab_dir / "sport").iterdir())


def _refused(ws, spec, **kw):
    with pytest.raises(GateError) as exc:
        make_release(ws, spec, **kw)
    assert _home(ws) == ["build"]  # nothing written but the build
    return [line.strip() for line in exc.value.details]


def test_mistyped_select_root_refuses_release_and_names_the_nearest(workspace):
    spec = setup(workspace, dump(TOPICS_1))
    spec.write_text(SPEC.replace(f"<{G}sport>", f"<{G}sprot>"), encoding="utf-8")
    lines = _refused(workspace, spec)
    assert lines[0] == (
        "no-label: 1 active topic without any preferred label (is the entity still in the "
        f"graph?): sprot (<{G}sprot>)"
    )
    assert lines[-1] == (
        f"unknown-entity: {spec}:6: select[0] parameter 'root' '<{G}sprot>': no graph "
        f"mentions it; nearest: sport (<{G}sport>)"
    )


def test_include_entity_no_graph_mentions_refuses_release(workspace):
    spec = setup(workspace, dump(TOPICS_1))
    spec.write_text(SPEC + f"include: ['<{G}canoe-pollo>']\n", encoding="utf-8")
    lines = _refused(workspace, spec)
    assert [ln.split(":")[0] for ln in lines] == ["no-label", "unknown-entity"]
    assert lines[1].startswith(f"unknown-entity: {spec}:10: include[0] '<{G}canoe-pollo>': ")
    assert lines[1].endswith(f"nearest: canoe polo (<{G}canoe-polo>)")


def test_curation_target_no_topic_has_refuses_release(workspace):
    spec = setup(workspace, dump(TOPICS_1))
    cur = workspace.vocab_dir / "sport.curation.yaml"
    cur.write_text(
        CURATION + "  - add_alias: {topic: canoe-pollo, alias: polo, language: en}\n",
        encoding="utf-8",
    )
    lines = _refused(workspace, spec)
    assert lines == [
        f"unknown-entity: {cur}:8: edit 4 (add_alias) topic 'canoe-pollo': no topic has "
        "this id and no graph entity would get it; nearest: canoe polo (canoe-polo)"
    ]


def test_dump_cut_short_refuses_release_by_topic_loss(workspace):
    spec = setup(workspace, dump(TOPICS_1))
    make_release(workspace, spec)
    kept = {k: v for k, v in TOPICS_1.items() if k in ("sport", "water-sports", "canoe-polo")}
    setup(workspace, dump(kept), "dump-cut.nt")
    with pytest.raises(GateError) as exc:
        make_release(workspace, spec)
    assert str(exc.value).endswith(
        "1 release gate problem; nothing released (waive='GATE' with reason='WHY' releases anyway)"
    )
    [line] = exc.value.details
    assert line.startswith(
        "  topic-loss: 4 of the 7 active topics of release 1.0.0 are gone without a "
        "replacement (57%, more than the 10% release.max_topic_loss allows"
    )
    assert _home(workspace) == ["1.0.0", "build"]


def test_waived_gate_is_recorded_in_manifest_and_changelog(workspace):
    spec = setup(workspace, dump(TOPICS_1))
    make_release(workspace, spec)
    kept = {k: v for k, v in TOPICS_1.items() if k != "dragon-boat"}
    setup(workspace, dump(kept), "dump-2.nt")
    with pytest.raises(ArgumentError, match="reason: say why the gates are waived"):
        make_release(workspace, spec, waive=["topic-loss"])
    with pytest.raises(ArgumentError, match="waive: unknown gate 'loss'"):
        make_release(workspace, spec, waive=["loss"], reason="x")
    r = make_release(workspace, spec, waive=["topic-loss"], reason="dragon boats left the desk")
    assert r.version == "2.0.0"
    m = json.loads((r.path / "manifest.json").read_text(encoding="utf-8"))
    [o] = m["overrides"]
    assert o["gate"] == "topic-loss" and o["reason"] == "dragon boats left the desk"
    assert o["problems"][0].startswith("1 of the 7 active topics of release 1.0.0 are gone")
    assert json.loads((r.path / "changelog.json").read_text())["waived_gates"] == [o]
    md = (r.path / "changelog.md").read_text(encoding="utf-8")
    assert "## Release gates waived\n\n- topic-loss, because: dragon boats left the desk\n" in md
    assert verify_release(r.path).ok


def test_refused_release_lists_one_line_per_problem_on_the_command_line(kgkit, workspace):
    spec = setup(workspace, dump(TOPICS_1))
    spec.write_text(SPEC.replace(f"<{G}sport>", f"<{G}sprot>"), encoding="utf-8")
    r = kgkit("release", str(spec))
    assert r.exit_code == 1
    lines = r.output.splitlines()
    assert lines[0] == (
        f"Error: {spec}: 2 release gate problems; nothing released "
        "(--waive GATE with --reason WHY releases anyway)"
    )
    assert [ln.split(":")[0] for ln in lines[1:]] == ["  no-label", "  unknown-entity"]
    r = kgkit("release", str(spec), "--waive", "all")
    assert r.exit_code == 2 and "--reason: say why the gates are waived" in r.output
    r = kgkit("release", str(spec), "--waive", "all", "--reason", "trying the pipeline")
    assert r.exit_code == 0, r.output
    assert "  gate no-label waived: trying the pipeline" in r.output.splitlines()


def test_compile_warns_of_gate_problems_and_strict_makes_them_errors(kgkit, workspace):
    spec = setup(workspace, dump(TOPICS_1))
    spec.write_text(SPEC.replace(f"<{G}sport>", f"<{G}sprot>"), encoding="utf-8")
    r = kgkit("compile", str(spec), "--quiet")
    assert r.exit_code == 0, r.output
    warnings = [ln for ln in r.output.splitlines() if ln.startswith("Warning: release gate ")]
    assert [w.split(":")[1] for w in warnings] == [
        " release gate no-label",
        " release gate unknown-entity",
    ]
    build = workspace.vocab_dir / "sport" / "build"
    kept = (build / "topics.jsonl").read_bytes()
    setup(workspace, dump(dict(TOPICS_1, ghost=("ghost", None, "sport", []))), "dump-2.nt")
    r = kgkit("compile", str(spec), "--strict")
    assert r.exit_code == 1
    assert r.output.splitlines()[0] == (
        f"Error: {spec}: 1 release gate problem; no build written (--strict)"
    )
    assert r.output.splitlines()[1] == (
        "  missing-language: 1 active topic without a preferred label in 'de' "
        "(languages.required): ghost (ghost)"
    )
    assert (build / "topics.jsonl").read_bytes() == kept  # the previous build is untouched


def test_lint_of_text_in_memory_matches_lint_of_the_file(tmp_path):
    """lint_turtle (pyoxigraph, used by the gates) finds what lint_path (rdflib) finds."""
    from kgkit.release.lint import lint_path, lint_turtle

    v = vocab(
        topic("sport", "sport", "Sport", parents=["swim"]),
        topic("swim", " ", "Schwimmen", parents=["sport"]),
        topic("chess", "chess\u0007", None),
    )
    skos = vocabulary_files(v, ["skos"])["skos.ttl"]()
    (tmp_path / "skos.ttl").write_text(skos, encoding="utf-8")
    by_file = lint_path(tmp_path / "skos.ttl")
    in_memory = lint_turtle(skos, str(tmp_path / "skos.ttl"))
    assert in_memory.findings == by_file.findings and by_file.errors
    assert {f.check for f in by_file.errors} >= {"hierarchy-loop", "blank-label"}
    # the gates skip the warning checks: the same errors, nothing else
    assert lint_turtle(skos, warnings=False).findings == by_file.errors


def test_root_without_descendants_refuses_release_by_no_topics(workspace):
    spec = setup(workspace, dump(TOPICS_1))
    leaf = SPEC.replace(f"<{G}sport>", f"<{G}canoe-polo>").replace("include_root: true", "")
    spec.write_text(leaf, encoding="utf-8")
    assert _refused(workspace, spec) == ["no-topics: the vocabulary has no active topic"]

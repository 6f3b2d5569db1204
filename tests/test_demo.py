"""The demo: its invented data, its messiness on purpose, and the whole job run on it."""

from __future__ import annotations

import contextlib
import json

import pycountry

from kgkit.cli import cli
from kgkit.demo import generate
from kgkit.demo.generate import REFRESH, core_lines, write_corpus, write_dumps


def test_generator_is_deterministic(tmp_path):
    a = write_dumps(tmp_path / "a")
    b = write_dumps(tmp_path / "b")
    for role in a:
        assert a[role].read_bytes() == b[role].read_bytes(), role
    ca = write_corpus(tmp_path / "ca")
    cb = write_corpus(tmp_path / "cb")
    assert [p.read_bytes() for p in ca] == [p.read_bytes() for p in cb]
    assert len(ca) == 36 and all(p.suffix == ".txt" for p in ca)


def test_a_few_thousand_entities_in_both_formats(tmp_path):
    dumps = write_dumps(tmp_path)
    subjects = set()
    for role in ("core", "topics"):
        for line in dumps[role].read_text(encoding="utf-8").splitlines():
            if line.startswith("<"):
                subjects.add(line.split(" ", 1)[0])
    records = 0
    for line in dumps["archive"].read_text(encoding="utf-8").splitlines():
        with contextlib.suppress(json.JSONDecodeError):
            records += "id" in json.loads(line)
    assert 300 < len(subjects) < 1000
    assert records == 2300  # 1,400 people and 900 clips
    assert 2000 < len(subjects) + records < 5000


def test_refreshed_core_differs_by_exactly_the_listed_changes():
    old, new = set(core_lines()), set(core_lines(refreshed=True))
    removed = {x for x in old - new if not x.startswith("#")}
    assert {x.split(" ")[0] for x in removed} == {
        "<http://demo.kgkit.invalid/e/seaweed-foraging>",
        "<http://demo.kgkit.invalid/e/reed-boat-racing>",
        "<http://demo.kgkit.invalid/e/fish-smoking>",
    }
    assert new - old == {line for _why, _gone, added in REFRESH for line in added}


def test_town_names_are_not_real_subdivisions():
    # outside reference: the ISO 3166-2 subdivision names shipped by pycountry
    real = {s.name.casefold() for s in pycountry.subdivisions}
    real |= {c.name.casefold() for c in pycountry.countries}
    names = {h + t for h in generate._TOWN_HEADS for t in generate._TOWN_TAILS}
    names |= set(generate._DISTRICTS) | {"Saltmere", "Tidewell"}
    assert not {n for n in names if n.casefold() in real}


def test_demo_leaves_both_releases_the_page_and_the_corpus(demo_workspace):
    root = demo_workspace["root"]
    assert [p.name for p in demo_workspace["releases"]] == ["1.0.0", "2.0.0"]
    for rel in demo_workspace["releases"]:
        for name in ("topics.jsonl", "lexicon.tsv", "skos.ttl", "manifest.json", "changelog.md"):
            assert (rel / name).is_file(), (rel, name)
    assert demo_workspace["page"].suffix == ".html"
    assert demo_workspace["page"].parent == root
    assert len(list((root / "corpus").glob("*.txt"))) == 36
    assert (root / "kgkit.yaml").is_file() and (root / "vocab" / "tidewell.yaml").is_file()


def test_demo_messiness_shows_up_where_it_should(demo_workspace):
    root = demo_workspace["root"]
    rejects = (root / "rejects" / "tidewell.rejects.txt").read_text(encoding="utf-8")
    causes = [x for x in rejects.splitlines() if x.startswith("# ")]
    assert len(causes) == 4
    assert "tidewell-core-refreshed.nt:" in causes[0]  # the last import's own file
    archive = (root / "rejects" / "archive.rejects.txt").read_text(encoding="utf-8")
    assert "record has no 'id'" in archive and "malformed JSON" in archive

    first = json.loads((demo_workspace["releases"][0] / "report.json").read_text("utf-8"))
    assert [c["members"] for c in first["cycles"]] == [["knot-tying", "rope-work"]]
    assert ["canoe-polo", "water-sports"] in first["reductions"]
    assert ["composting", "leisure"] in first["reductions"]
    assert {a["key"] for a in first["ambiguous"]} == {"netting", "tacking", "saltmere"}
    reasons = {d["id"]: d["reason"] for d in first["dropped_topics"]}
    for noise in ("topic", "activity", "miscellany", "places"):
        assert reasons[noise] == "stop-topic"
    assert reasons["petanque-nautique"].startswith("missing-language")

    topics = {}
    for line in (demo_workspace["releases"][0] / "topics.jsonl").open(encoding="utf-8"):
        t = json.loads(line)
        topics[t["id"]] = t
    assert "de" not in topics["reed-boat-racing"]["labels"]  # the graph has no German label
    assert topics["net-mending"]["labels"]["de"] == "Netzflicken"  # the curation set one
    assert not any(i.startswith("person-") or i.startswith("clip-") for i in topics)


def test_second_release_follows_the_changed_dump_and_curation(demo_workspace):
    second = demo_workspace["releases"][1]
    log = json.loads((second / "changelog.json").read_text(encoding="utf-8"))
    assert log["previous"] == "1.0.0" and log["version"] == "2.0.0" and log["level"] == "major"
    kinds = {(c["kind"], c["topic"]) for c in log["changes"]}
    assert {
        ("deprecated", "seaweed-foraging"),
        ("added", "sea-glass-crafts"),
        ("added", "paddleboard-polo"),
        ("added", "harbour-festivals"),
        ("relabelled", "reed-boat-racing"),
        ("moved", "fish-smoking"),
        ("alias-removed", "tidewell-region"),
    } <= kinds
    # the edit aimed at the redirected topic is carried to its successor, not stale,
    # and the successor inherits every name the redirected topic had in 1.0.0
    assert log["stale_curation"] == []
    topics = {t["id"]: t for t in map(json.loads, (second / "topics.jsonl").open(encoding="utf-8"))}
    assert topics["seaweed-foraging"]["status"] == "deprecated"
    assert topics["seaweed-foraging"]["replaced_by"] == "shore-foraging"
    report = json.loads((second / "report.json").read_text(encoding="utf-8"))
    assert [e["carried"] for e in report["curation"]["carried"]] == [
        {"from": "seaweed-foraging", "to": "shore-foraging"}
    ]
    inherited = topics["shore-foraging"]["aliases"]
    assert {"seaweed foraging", "seaweed gathering", "kelp gathering"} <= set(inherited["en"])


def test_demo_steps_say_what_they_did(demo_workspace):
    titles = [s.title for s in demo_workspace["steps"]]
    assert titles[0] == "made the workspace"
    assert "released tidewell 1.0.0" in titles and "released tidewell 2.0.0" in titles
    every_file = [f for s in demo_workspace["steps"] for f in s.files]
    assert all(f.exists() for f in every_file), [f for f in every_file if not f.exists()]


def test_demo_command_refuses_an_existing_workspace(runner, demo_workspace):
    res = runner.invoke(cli, ["demo", str(demo_workspace["root"])])
    assert res.exit_code == 1
    assert res.output == (
        f"Error: {demo_workspace['root']} already holds a workspace; give a new folder\n"
    )


def test_corpus_mentions_the_cooperative_everywhere(tmp_path):
    # the cooperative's own name is in every article: the probe must flag it
    paths = list(write_corpus(tmp_path))
    assert len(paths) == 36  # the demo's 36 articles
    for path in paths:
        assert "Tidewell" in path.read_text(encoding="utf-8")


def test_probe_flags_the_cooperative_name_in_the_demo_corpus(demo_workspace):
    from kgkit.probe import probe_corpus

    first = demo_workspace["releases"][0]
    report = probe_corpus(first, demo_workspace["root"] / "corpus")
    assert [k.key for k in report.flagged] == ["tidewell"]
    assert report.flagged[0].documents == report.documents == 36


def test_probe_of_the_demo_release_shows_both_saltmeres(demo_workspace):
    from kgkit.probe import probe_text

    second = demo_workspace["releases"][1]
    (hit,) = [h for h in probe_text(second, "A regatta off Saltmere.") if h.key == "saltmere"]
    assert hit.is_ambiguous
    assert [(c.topic, c.parents) for c in hit.candidates] == [
        ("saltmere", (("tidewell-region", "Tidewell region"),)),
        ("saltmere-reedlands", (("reedlands", "Reedlands"),)),
    ]

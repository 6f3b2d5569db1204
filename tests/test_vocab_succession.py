"""Names follow their topic across releases (issue 10 item 1), on in-memory compiles.

Each case compiles a "release N" and then a refreshed "release N+1" that follows on it
(``build_vocabulary(previous=...)``), and checks the invariant: every match key of
release N is, in N+1, still a key of the same topic or of its replacement, or listed
in ``lost_names`` with a reason.
"""

from __future__ import annotations

from pathlib import Path

import pycountry
import pytest
import yaml

from kgkit.errors import SpecError
from kgkit.vocab.compile import build_vocabulary
from kgkit.vocab.curation import load_curation
from kgkit.vocab.model import Vocabulary
from kgkit.vocab.select import Fetched
from kgkit.vocab.spec import parse_spec
from kgkit.vocab.succession import follow_replacement
from kgkit.workspace import Config, Workspace

G = "http://example.org/graph/"
WS = Workspace(Path("/tmp/kgkit-succession-test"), Config.default())


def spec(**extra):
    data = {
        "name": "sport",
        "namespace": "http://example.org/vocab/sport/",
        "select": [{"template": "descendants", "params": {"root": f"<{G}sport>"}}],
        **extra,
    }
    return parse_spec(data, Path("/tmp/kgkit-succession-test/vocab/sport.yaml"), WS)


#: id -> (labels [(lang, text)], aliases [(lang, text)], parent)
BASE = {
    "sport": ([("en", "sport"), ("de", "Sport")], [], None),
    "water-sports": ([("en", "water sports")], [], "sport"),
    "rowing": (
        [("en", "rowing"), ("de", "Rudern")],
        [("en", "crew rowing"), ("en", "Ro")],
        "water-sports",
    ),  # noqa: E501
    "ball-games": ([("en", "ball games")], [("en", "ball sports")], "sport"),
    "canoe-polo": ([("en", "canoe polo")], [("en", "kayak polo")], "water-sports"),
}


def graph(topics: dict, same_as: dict | None = None, base: str = G) -> tuple[list[str], Fetched]:
    f = Fetched()
    for tid, (labels, aliases, parent) in topics.items():
        src = base + tid
        f.labels[src] = [(lg, x, 0) for lg, x in labels]
        if aliases:
            f.aliases[src] = [(lg, x, "alias") for lg, x in aliases]
        if parent:
            f.parents[src] = [G + parent]
        f.graphs[src] = {"g"}
    for new, old in (same_as or {}).items():
        f.same_as[G + new] = {G + o for o in old}
    return sorted(base + t for t in topics), f


def compile_(topics, previous=None, s=None, edits=(), same_as=None, links=None, strict=False):
    selected, f = graph(topics, same_as)
    return build_vocabulary(
        WS,
        s or spec(),
        selected,
        f,
        list(edits),
        strict=strict,
        previous=previous,
        graph_links=links,
    )


def keys_by_topic(v: Vocabulary) -> dict[str, set[str]]:
    out: dict[str, set[str]] = {}
    for row in v.lexicon:
        out.setdefault(row.topic, set()).add(row.match_key)
    return out


def assert_names_follow(old: Vocabulary, new: Vocabulary) -> None:
    """The invariant of issue 10: each (match key, topic) of ``old``'s lexicon is a key of
    the same topic, or of its replacement, in ``new``, or ``new`` lists it as lost."""
    now = keys_by_topic(new)
    lost = {(d["topic"], d["language"], d["name"]) for d in new.report.lost_names}
    for row in old.lexicon:
        t = new.by_id.get(row.topic)
        target = row.topic
        if t is not None and not t.is_active:
            target = follow_replacement(t.replaced_by, new.by_id)
        if target in now and row.match_key in now[target]:
            assert (row.topic, row.language, row.alias) not in lost, row
            continue
        assert (row.topic, row.language, row.alias) in lost, f"{row} neither kept nor listed"


def edits_file(tmp_path, edits):
    path = tmp_path / "sport.curation.yaml"
    path.write_text(yaml.safe_dump({"edits": edits}), encoding="utf-8")
    return load_curation(path)


def test_first_compile_has_no_succession_fields():
    v1 = compile_(BASE)
    r = v1.report.to_json()
    assert "carried_names" not in r and "lost_names" not in r
    assert "release_deprecations" not in r


def test_redirect_hands_every_name_to_the_successor():
    v1 = compile_(BASE)
    topics = dict(BASE)
    del topics["rowing"]
    topics["sculling"] = ([("en", "sculling")], [], "water-sports")
    v2 = compile_(topics, v1, same_as={"sculling": ["rowing"]})
    rowing = v2.topic("rowing")
    assert not rowing.is_active and rowing.replaced_by == "sculling"
    assert v2.report.release_deprecations == [
        {"id": "rowing", "replaced_by": "sculling", "via": "same-as"}
    ]
    assert dict(v2.topic("sculling").aliases) == {
        "de": ["Rudern"],
        "en": ["Ro", "crew rowing", "rowing"],
    }
    assert {(c["name"], c["result"]) for c in v2.report.carried_names} == {
        ("rowing", "kept"),
        ("Rudern", "kept"),
        ("crew rowing", "kept"),
        ("Ro", "kept"),
    }
    assert v2.report.lost_names == []
    assert v2.report.counts["carried_names"] == 4
    assert_names_follow(v1, v2)


def test_names_carried_go_through_the_alias_rules():
    v1 = compile_(BASE)
    topics = dict(BASE)
    del topics["rowing"]
    topics["sculling"] = ([("en", "sculling")], [], "water-sports")
    s = spec(aliases={"min_length": 3})
    v2 = compile_(topics, v1, s=s, same_as={"sculling": ["rowing"]})
    results = {c["name"]: c["result"] for c in v2.report.carried_names}
    assert results["Ro"] == "too-short" and results["rowing"] == "kept"
    (lost,) = v2.report.lost_names
    assert (lost["name"], lost["reason"], lost["replaced_by"]) == ("Ro", "too-short", "sculling")
    assert_names_follow(v1, v2)


def test_names_carried_meet_the_ambiguity_policy():
    v1 = compile_(BASE)
    topics = dict(BASE)
    del topics["rowing"]
    # the successor, and another topic that already has the old label as an alias
    topics["sculling"] = ([("en", "sculling")], [], "water-sports")
    topics["canoe-polo"] = ([("en", "canoe polo")], [("en", "crew rowing")], "water-sports")
    v2 = compile_(
        topics, v1, s=spec(aliases={"ambiguous": "drop"}), same_as={"sculling": ["rowing"]}
    )  # noqa: E501
    results = {c["name"]: c["result"] for c in v2.report.carried_names}
    assert results["crew rowing"] != "kept" and results["rowing"] == "kept"
    assert "crew rowing" not in v2.lexicon_keys()
    assert_names_follow(v1, v2)


def test_deleted_without_replacement_lists_the_names_lost():
    v1 = compile_(BASE)
    topics = {k: v for k, v in BASE.items() if k != "rowing"}
    v2 = compile_(topics, v1)
    assert v2.topic("rowing").replaced_by is None and not v2.topic("rowing").is_active
    lost = {(d["name"], d["reason"], tuple(d["still_matches"])) for d in v2.report.lost_names}
    assert lost == {
        ("rowing", "deprecated-without-replacement", ()),
        ("Rudern", "deprecated-without-replacement", ()),
        ("crew rowing", "deprecated-without-replacement", ()),
        ("Ro", "deprecated-without-replacement", ()),
    }
    # each named with the label the old topic was shown with, beside its id
    assert {(d["topic"], d["label"]) for d in v2.report.lost_names} == {
        ("rowing", v1.display_label("rowing"))
    }
    assert_names_follow(v1, v2)


def test_id_change_keeps_the_names_on_the_new_id():
    v1 = compile_(BASE)
    # another graph's "rowing" makes the ids clash: both get a hash suffix
    selected, f = graph(BASE)
    other = "http://example.org/other/rowing"
    f.labels[other] = [("en", "rowing machine", 0)]
    f.parents[other] = [G + "sport"]
    v2 = build_vocabulary(WS, spec(), sorted([*selected, other]), f, previous=v1)
    new_id = v2.topic("rowing").replaced_by
    assert new_id.startswith("rowing-") and v2.topic(new_id).source == G + "rowing"
    assert v2.report.release_deprecations[0]["via"] == "same-source"
    assert {c["result"] for c in v2.report.carried_names} == {"already-a-name"}
    assert_names_follow(v1, v2)


def test_curation_merge_carries_the_names_of_the_release(tmp_path):
    v1 = compile_(
        BASE,
        edits=edits_file(
            tmp_path,
            [{"add_alias": {"topic": "ball-games", "alias": "ballgames", "language": "en"}}],
        ),
    )  # noqa: E501
    merge = edits_file(tmp_path, [{"merge": {"topic": "ball-games", "into": "sport"}}])
    v2 = compile_(BASE, v1, edits=merge)
    assert v2.topic("ball-games").replaced_by == "sport"
    # the curated alias of release 1 (its edit is gone now) still follows the topic
    assert "ballgames" in v2.topic("sport").aliases["en"]
    assert {"ball games", "ball sports", "ballgames"} <= v2.lexicon_keys("sport")
    assert_names_follow(v1, v2)


def test_edit_aimed_at_a_deprecated_topic_is_carried_or_stale_with_strict(tmp_path):
    v1 = compile_(BASE)
    topics = dict(BASE)
    del topics["rowing"]
    topics["sculling"] = ([("en", "sculling")], [], "water-sports")
    edits = edits_file(
        tmp_path, [{"add_alias": {"topic": "rowing", "alias": "oarsport", "language": "en"}}]
    )
    v2 = compile_(topics, v1, edits=edits, same_as={"sculling": ["rowing"]})
    assert v2.report.curation["stale"] == []
    (carried,) = v2.report.curation["carried"]
    assert carried["carried"] == {"from": "rowing", "to": "sculling"} and carried["edit"] == 1
    assert v2.report.counts["curation_carried"] == 1
    assert "oarsport" in v2.topic("sculling").aliases["en"]
    with pytest.raises(SpecError, match=r"edit 1 \(add_alias rowing\) is stale"):
        compile_(topics, v1, edits=edits, same_as={"sculling": ["rowing"]}, strict=True)


def test_graph_links_find_a_replacement_the_selection_does_not_show():
    v1 = compile_(BASE)
    topics = dict(BASE)
    del topics["rowing"]
    topics["sculling"] = ([("en", "sculling")], [], "water-sports")
    asked = []

    def links(sources):
        asked.append(list(sources))
        return {G + "rowing": {G + "sculling"}}

    v2 = compile_(topics, v1, links=links)
    assert v2.topic("rowing").replaced_by == "sculling"
    assert asked == [[G + "rowing"]]  # once, for the one topic that needed it
    assert_names_follow(v1, v2)


def test_carried_names_stay_carried_in_later_releases_and_follow_a_second_redirect():
    v1 = compile_(BASE)
    t2 = dict(BASE)
    del t2["rowing"]
    t2["sculling"] = ([("en", "sculling")], [], "water-sports")
    v2 = compile_(t2, v1, same_as={"sculling": ["rowing"]})
    # nothing changes in the graph: the names stay with sculling
    v3 = compile_(t2, v2)
    assert dict(v3.topic("sculling").aliases) == dict(v2.topic("sculling").aliases)
    # (the deprecated topic is kept as it was; no topic is newly deprecated)
    assert v3.report.lost_names == [] and v3.report.release_deprecations == []
    assert_names_follow(v2, v3)
    # the successor goes too: every name, its own and those it inherited, moves on
    t4 = dict(t2)
    del t4["sculling"]
    t4["boating"] = ([("en", "boating")], [], "water-sports")
    v4 = compile_(t4, v3, same_as={"boating": ["sculling"]})
    assert v4.topic("rowing").replaced_by == "boating"
    assert {"rowing", "rudern", "sculling", "crew rowing"} <= v4.lexicon_keys("boating")
    assert_names_follow(v3, v4)


# --- published data: ISO 3166-3 withdrawn country codes (shipped in pycountry) -----

ISO = "http://iso.example/c/"


def _countries(withdrawn: bool):
    f = Fetched()
    root = ISO + "world"
    f.labels[root] = [("en", "world", 0)]
    for c in pycountry.countries:
        f.labels[ISO + c.alpha_2] = [("en", c.name, 0)]
        f.parents[ISO + c.alpha_2] = [root]
    if withdrawn:
        for h in pycountry.historic_countries:
            f.labels[ISO + h.alpha_4] = [("en", h.name, 0)]
            f.parents[ISO + h.alpha_4] = [root]
    return sorted(f.labels), f


def test_iso_3166_3_withdrawn_countries_hand_their_names_to_their_successors():
    """ISO 3166-3 (pycountry.historic_countries, from the iso-codes data): the last two
    letters of a withdrawn country's four-letter code are the alpha-2 code of its
    successor, or letters that are no current alpha-2 code (e.g. HH) when there is none.
    A release of the current and withdrawn countries, then a refreshed graph that keeps
    only a redirect from each withdrawn country to its successor: every withdrawn
    country's name still matches its successor, and the names of those without one
    are listed as lost."""
    s = parse_spec(
        {
            "name": "countries",
            "namespace": "http://example.org/vocab/countries/",
            "select": [{"template": "descendants", "params": {"root": f"<{ISO}world>"}}],
            "aliases": {"ambiguous": "keep"},
        },
        Path("/tmp/kgkit-succession-test/vocab/countries.yaml"),
        WS,
    )
    current = {c.alpha_2 for c in pycountry.countries}
    successor = {
        h.alpha_4: h.alpha_4[2:] if h.alpha_4[2:] in current else None
        for h in pycountry.historic_countries
    }
    assert successor["BUMM"] == "MM"  # Burma -> Myanmar, as the issue names it
    assert any(v is None for v in successor.values())  # some have no single successor

    sel1, f1 = _countries(withdrawn=True)
    v1 = build_vocabulary(WS, s, sel1, f1)
    sel2, f2 = _countries(withdrawn=False)

    def links(sources):  # the refreshed graph: withdrawn --sameAs--> successor
        out = {}
        for src in sources:
            code = src.rsplit("/", 1)[1]
            if successor.get(code):
                out[src] = {ISO + successor[code]}
        return out

    v2 = build_vocabulary(WS, s, sel2, f2, previous=v1, graph_links=links)
    keys = keys_by_topic(v2)
    lost = {(d["topic"], d["name"]): d for d in v2.report.lost_names}
    for h in pycountry.historic_countries:
        old = v1.topic(h.alpha_4)
        t = v2.topic(h.alpha_4)
        assert not t.is_active
        key = next(r.match_key for r in v1.lexicon if r.topic == h.alpha_4)
        if successor[h.alpha_4]:
            assert t.replaced_by == successor[h.alpha_4]
            assert key in keys[successor[h.alpha_4]], h.name
        else:
            assert t.replaced_by is None
            d = lost[(h.alpha_4, old.labels["en"])]
            assert d["reason"] == "deprecated-without-replacement"
            assert d["still_matches"] == sorted({r.topic for r in v2.lexicon if r.match_key == key})
    assert_names_follow(v1, v2)

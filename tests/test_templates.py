"""kgkit.templates: the header format, typed binding, and every built-in template."""

from __future__ import annotations

import re

import pyoxigraph as ox
import pytest
from explore_support import T, make_explore_workspace

from kgkit.errors import ParameterError, TemplateError
from kgkit.query import connect, run_query
from kgkit.store import open_store
from kgkit.templates import (
    bind_template,
    list_templates,
    load_template,
    parse_template,
    run_template,
    walk_links,
)

BUILTINS = [
    "ancestors",
    "card",
    "children",
    "descendants",
    "instances",
    "orphans",
    "popularity",
    "roots",
    "search",
    "type-counts",
]


@pytest.fixture(scope="module")
def ws(tmp_path_factory):
    return make_explore_workspace(tmp_path_factory.mktemp("t") / "ws")


def _rows(ws, name, graphs=None, **params):
    with connect(ws) as b:
        res = run_template(b, name, params, graphs=graphs)
        return res.variables, [tuple(_short(ws, t) for t in r) for r in res.rows]


def _short(ws, term):
    if term is None:
        return None
    if isinstance(term, ox.NamedNode):
        return ws.compact(term.value)
    return term.value


def test_builtins_are_all_listed(ws):
    assert [t.name for t in list_templates(ws) if t.builtin] == BUILTINS


@pytest.mark.parametrize("name", BUILTINS)
def test_every_builtin_parses_and_binds_to_valid_sparql(ws, name):
    tpl = load_template(ws, name)
    assert tpl.summary
    assert all(p.help for p in tpl.params)
    raw = {p.name: "t:sport" for p in tpl.params if p.required}
    if name == "search":
        raw = {"text": "polo"}
    text, _ = bind_template(tpl, raw, ws)
    assert "%{" not in text
    # pyoxigraph parses the bound text: the declared parameters match the query
    ox.Store().query(text)
    for p in tpl.params:
        if p.kind != "predicates" and (tpl.walk is None or p.name != tpl.walk.limit):
            assert f"?{p.name}" in text


def test_descendants_with_depth(ws):
    variables, rows = _rows(ws, "descendants", root="t:sport")
    assert variables[:2] == ["item", "depth"]
    assert rows == [
        ("t:ball-games", "1"),
        ("t:loop-b", "1"),
        ("t:water-sports", "1"),
        ("t:canoe-polo", "2"),  # also under paddle-sports, at depth 3: the fewest links count
        ("t:loop-a", "2"),
        ("t:paddle-sports", "2"),
        ("t:polo", "2"),
        ("t:rowing", "2"),
        ("t:sailing", "2"),
        ("t:water-polo", "2"),
        ("t:lakeport-regatta", "3"),
    ]
    _, rows = _rows(ws, "descendants", root="<http://example.org/t/sport>", max_depth="1")
    assert [r[0] for r in rows] == ["t:ball-games", "t:loop-b", "t:water-sports"]
    _, rows = _rows(ws, "descendants", graphs=["topics"], root="t:water-sports")
    assert "t:sailing" not in [r[0] for r in rows]


def test_descendants_through_a_cycle_ends(ws):
    _, rows = _rows(ws, "descendants", root="t:loop-a")
    assert rows == [("t:loop-b", "1")]


def test_ancestors(ws):
    _, rows = _rows(ws, "ancestors", entity="t:lakeport-regatta")
    assert rows == [("t:rowing", "1"), ("t:water-sports", "2"), ("t:sport", "3")]
    _, rows = _rows(ws, "ancestors", entity="t:canoe-polo", max_depth="1")
    assert rows == [("t:ball-games", "1"), ("t:paddle-sports", "1")]


def test_children(ws):
    variables, rows = _rows(ws, "children", entity="t:water-sports")
    assert variables == ["item", "label", "children"]
    assert rows == [
        ("t:paddle-sports", "paddle sports", "1"),
        ("t:rowing", "rowing", "1"),
        ("t:sailing", "sailing", "0"),
        ("t:water-polo", "polo", "0"),
    ]
    _, rows = _rows(ws, "children", entity="t:water-sports", lang="de")
    assert rows[0] == ("t:paddle-sports", None, "1")


def test_instances_include_subclasses(ws):
    _, rows = _rows(ws, "instances", **{"class": "t:Topic"})
    # canoe-polo is a t:TeamSport, a subclass of t:Topic
    assert [r[0] for r in rows] == [
        "t:ball-games",
        "t:canoe-polo",
        "t:paddle-sports",
        "t:rowing",
        "t:sport",
        "t:water-sports",
    ]


def test_search_prefix_and_substring_case_insensitive(ws):
    _, rows = _rows(ws, "search", text="POLO")
    assert rows == [("t:polo", "polo", "label"), ("t:water-polo", "polo", "label")]
    _, rows = _rows(ws, "search", text="polo", match="substring", lang="en")
    assert [(r[0], r[1]) for r in rows] == [
        ("t:canoe-polo", "canoe polo"),
        ("t:canoe-polo", "kayak polo"),
        ("t:polo", "polo"),
        ("t:water-polo", "polo"),
        ("t:water-polo", "water polo"),
    ]
    _, rows = _rows(ws, "search", text="kanu", lang="de")
    assert rows == [("t:canoe-polo", "Kanupolo", "label")]
    _, rows = _rows(ws, "search", text="kanu", lang="en")
    assert rows == []
    with pytest.raises(ParameterError, match="not one of prefix, substring"):
        _rows(ws, "search", text="x", match="regex")


def test_card(ws):
    _, rows = _rows(ws, "card", entity="t:canoe-polo")
    assert rows == [
        ("alias", "kayak polo"),
        ("children", "0"),
        ("description", "team sport played in canoes, with a ball"),
        ("label", "Kanupolo"),
        ("label", "canoe polo"),
        ("parent", "t:ball-games"),
        ("parent", "t:paddle-sports"),
        ("type", "t:TeamSport"),
    ]


def test_roots_orphans_type_counts(ws):
    assert _rows(ws, "roots")[1] == [("t:sport", "3"), ("t:Topic", "1")]
    assert _rows(ws, "orphans")[1] == [("t:tidewell-notes",)]
    assert _rows(ws, "type-counts")[1] == [
        ("t:Topic", "5"),
        ("t:Event", "1"),
        ("t:TeamSport", "1"),
    ]


def test_popularity_counts_incoming_statements_but_not_hierarchy_links(ws):
    _, rows = _rows(ws, "popularity", root="t:water-sports")
    assert rows == [("t:canoe-polo", "2"), ("t:rowing", "1")]


@pytest.mark.parametrize(
    "value",
    [
        "x> } ; DROP ALL ; #",
        "<http://example.org/t/sport> } ; DROP ALL ; #",
        '<http://e/a"b>',
        "nope:x",
        "not an iri",
        "",
    ],
)
def test_injection_and_bad_iris_are_refused_and_change_nothing(ws, value):
    with open_store(ws.store_path) as store:
        before = len(store)
    with pytest.raises(ParameterError):
        _rows(ws, "descendants", root=value)
    with open_store(ws.store_path) as store:
        assert len(store) == before


def test_literal_values_are_bound_not_pasted(ws):
    evil = 'polo") } } ; DROP ALL ; #'
    tpl = load_template(ws, "search")
    text, _ = bind_template(tpl, {"text": evil}, ws)
    assert str(ox.Literal(evil)) in text
    assert _rows(ws, "search", text=evil)[1] == []


@pytest.mark.parametrize(
    ("name", "params", "message"),
    [
        ("descendants", {"root": "t:sport", "max_depth": "two"}, "'two' is not an integer"),
        ("descendants", {}, "needs parameter 'root'"),
        ("descendants", {"root": "t:sport", "depth": "1"}, "no parameter 'depth'"),
        ("search", {"text": "x", "lang": "en_GB!"}, "not a BCP 47 language tag"),
        ("descendants", {"root": "t:sport", "links": "@nothing"}, "unknown profile role"),
        ("descendants", {"root": "t:sport", "max_depth": "-1"}, "must not be negative"),
    ],
)
def test_bad_values_are_refused(ws, name, params, message):
    with pytest.raises(ParameterError, match=message):
        _rows(ws, name, **params)


def test_predicates_parameter_overrides_the_profile(ws):
    _, rows = _rows(ws, "descendants", root="t:Topic", links="rdfs:subClassOf")
    assert rows == [("t:TeamSport", "1")]
    _, rows = _rows(ws, "descendants", root="t:Topic")  # profile has both
    assert rows == [("t:TeamSport", "1")]
    _, rows = _rows(ws, "descendants", root="t:sport", links="skos:related")
    assert rows == []


def test_workspace_template_overrides_builtin_and_adds_new(tmp_path):
    ws = make_explore_workspace(tmp_path / "ws")
    (ws.queries_dir / "children.rq").write_text(
        "#: about Only the number of children.\n"
        "#: param entity iri -- the parent\n"
        "#: param links predicates = @parent -- links\n"
        "SELECT (COUNT(?c) AS ?n) WHERE { ?c %{links} ?entity }\n",
        encoding="utf-8",
    )
    (ws.queries_dir / "labels-in.rq").write_text(
        "#: about Labels in one language.\n"
        "#: param lang language = @language -- language\n"
        "SELECT ?s ?l WHERE { ?s skos:prefLabel ?l FILTER(lang(?l) = ?lang) } ORDER BY ?l\n",
        encoding="utf-8",
    )
    tpl = load_template(ws, "children")
    assert not tpl.builtin and tpl.summary == "Only the number of children."
    assert _rows(ws, "children", entity="t:water-sports")[1] == [("4",)]
    _, rows = _rows(ws, "labels-in", lang="de")
    assert [r[1] for r in rows] == ["Kanupolo", "Sport", "Wassersport"]


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("#: param x thing -- y\nSELECT ?x WHERE { ?x ?p ?o }", "t.rq:1: unknown kind 'thing'"),
        ("#: param x iri\nSELECT ?y WHERE { ?y ?p ?o }", "'x' is not used as ?x"),
        ("#: param p predicates = @parent\nSELECT * WHERE { ?a ?b ?c }", "no %{p} slot"),
        ("SELECT * WHERE { ?a %{q} ?c }", "slot %{q} is not a declared"),
        ("#: about x\n#: frobnicate\nSELECT * WHERE { ?a ?b ?c }", "t.rq:2: unknown header"),
        ("#: param x iri = @parent\nSELECT * WHERE { ?x ?b ?c }", "does not fit kind iri"),
        ("#: param x iri\n#: param x iri\nSELECT * WHERE { ?x ?b ?c }", "declared twice"),
        ("#: about nothing\n", "no query after the header"),
        ("#: param x\nSELECT * WHERE { ?x ?b ?c }", "t.rq:1: malformed parameter"),
    ],
)
def test_malformed_headers_name_file_and_line(text, message):
    with pytest.raises(TemplateError, match=re.escape(message)):
        parse_template(text, "t", "t.rq")


def test_walk_links_is_breadth_first_and_stops_at_cycles():
    n = ox.NamedNode
    a, b, c, d = (n(f"http://e/{x}") for x in "abcd")
    links = [(a, b), (b, c), (c, a), (a, c), (c, d)]
    assert walk_links(links, a) == [(b, 1), (c, 1), (d, 2)]
    assert walk_links(links, a, limit=1) == [(b, 1), (c, 1)]


def test_run_query_sees_template_text_exactly(ws):
    # the bound text is plain SPARQL: running it directly gives the same links
    tpl = load_template(ws, "descendants")
    text, _ = bind_template(tpl, {"root": "t:rowing"}, ws)
    with connect(ws) as b:
        rows = list(run_query(b, text).rows)
    assert [(r[0].value, r[1].value) for r in rows] == [(T + "rowing", T + "lakeport-regatta")]


def _graph_ws(tmp_path, section):
    from kgkit.workspace import CONFIG_NAME, init_workspace, load_workspace

    w = init_workspace(tmp_path / "gws")
    path = w.root / CONFIG_NAME
    path.write_text(path.read_text(encoding="utf-8") + section, encoding="utf-8")
    return load_workspace(w.root)


LANG_TPL = (
    "#: param lang language\nSELECT ?l WHERE { ?s ?p ?l FILTER(langMatches(lang(?l), ?lang)) }"
)


def test_untagged_value_binds_the_empty_language_range(tmp_path):
    w = _graph_ws(tmp_path, "")
    text, values = bind_template(parse_template(LANG_TPL, "t"), {"lang": "@untagged"}, w)
    assert values["lang"] == ox.Literal("")
    assert 'VALUES (?lang) { ("") }' in text


def test_a_graph_read_in_a_language_adds_its_untagged_row(tmp_path):
    w = _graph_ws(tmp_path, "graphs:\n  trades:\n    untagged_language: en-gb\n")
    tpl = parse_template(LANG_TPL, "t")
    # en-gb lies within the range en: untagged literals of "trades" count as en
    assert 'VALUES (?lang) { ("en") ("") }' in bind_template(tpl, {"lang": "en"}, w, ["trades"])[0]
    # not within de, and not when "trades" is not queried
    assert 'VALUES (?lang) { ("de") }' in bind_template(tpl, {"lang": "de"}, w, ["trades"])[0]
    assert 'VALUES (?lang) { ("en") }' in bind_template(tpl, {"lang": "en"}, w, ["other"])[0]


def test_a_role_reads_every_queried_graphs_own_predicates(tmp_path):
    w = _graph_ws(
        tmp_path, "graphs:\n  regions:\n    profile: {label: ['<http://e.example/name>']}\n"
    )
    tpl = parse_template("#: param l predicates = @label\nSELECT ?s WHERE { ?s %{l} ?o }", "t")
    alone = bind_template(tpl, {}, w, ["other"])[0]
    both = bind_template(tpl, {}, w, ["other", "regions"])[0]
    assert "<http://e.example/name>" not in alone
    assert "|<http://e.example/name>)" in both

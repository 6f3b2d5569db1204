"""SKOS quality checks: each on a crafted vocabulary that has exactly its fault, and the
checks that have an independent definition compared with SPARQL queries run by rdflib.

Sources: the W3C SKOS Reference, Recommendation of 18 August 2009
(https://www.w3.org/TR/2009/REC-skos-reference-20090818/), integrity conditions S13,
S14 and S27, named beside the queries below; the word list of the ``wordfreq`` package
(PyPI) for Persian words written with a zero-width non-joiner.
"""

from __future__ import annotations

import json
import random

import pytest
import rdflib
from conftest import DATA

from kgkit.cli import cli
from kgkit.errors import ParseError
from kgkit.release.lint import CHECKS, LintTargetError, lint_graph, lint_path

#: Each fixture folder is named after the one check that must fire on it.
CASES = sorted(p.name for p in DATA.glob("lint-*") if p.name != "lint-clean")

EX = "http://example.org/vocab/lint/"
HEAD = "PREFIX skos: <http://www.w3.org/2004/02/skos/core#>\n"
OWL_DEPRECATED = "<http://www.w3.org/2002/07/owl#deprecated>"

# Independent definitions, as SPARQL 1.1 over the SKOS file (rdflib evaluates them).
# Each returns the subjects a finding of that check must name, one row per finding.
SPARQL = {
    # W3C SKOS Reference, S14: a resource has no more than one value of skos:prefLabel
    # per language tag.
    "two-preferred-labels": """SELECT DISTINCT ?c WHERE {
        ?c skos:prefLabel ?a, ?b .
        FILTER(?a != ?b && LCASE(LANG(?a)) = LCASE(LANG(?b))) }""",
    # W3C SKOS Reference, S13: skos:prefLabel, skos:altLabel and skos:hiddenLabel are
    # pairwise disjoint properties.
    "label-kind-clash": """SELECT DISTINCT ?c WHERE {
        VALUES (?p ?q) { (skos:prefLabel skos:altLabel) (skos:prefLabel skos:hiddenLabel)
                         (skos:altLabel skos:hiddenLabel) }
        ?c ?p ?l ; ?q ?l . }""",
    # W3C SKOS Reference, S27: skos:related is disjoint with skos:broaderTransitive
    # (skos:broader is a sub-property of it, skos:narrower its inverse's sub-property).
    "related-to-ancestor": """SELECT DISTINCT ?low ?high WHERE {
        ?low skos:related|^skos:related ?high .
        ?low (skos:broader|^skos:narrower)+ ?high . FILTER(?low != ?high) }""",
    # A concept reached from itself through broader links (common practice, no source:
    # SKOS itself allows such cycles).
    "hierarchy-loop": """SELECT DISTINCT ?c WHERE {
        ?c (skos:broader|^skos:narrower)+ ?c . }""",
    # A concept without skos:prefLabel (common practice, no source).
    "no-preferred-label": """SELECT DISTINCT ?c WHERE {
        ?c a skos:Concept . FILTER NOT EXISTS { ?c skos:prefLabel ?l } }""",
    # A live concept with no semantic relation either way (common practice, no source).
    "unlinked-concept": f"""SELECT DISTINCT ?c WHERE {{
        ?c a skos:Concept .
        FILTER NOT EXISTS {{ ?c {OWL_DEPRECATED} true }}
        FILTER NOT EXISTS {{ ?c skos:broader|skos:narrower|skos:related|^skos:broader|
                                ^skos:narrower|^skos:related ?x . FILTER(?x != ?c) }} }}""",
}


def _sparql_findings(g: rdflib.Graph, check: str) -> set[tuple[str, ...]]:
    """Subjects per finding by the SPARQL definition; loops become one set of members."""
    rows = {tuple(str(v) for v in row) for row in g.query(HEAD + SPARQL[check])}
    if check == "hierarchy-loop":
        # the concepts on loops: lint reports one finding per strongly connected group,
        # so compare the union of members
        return {tuple(sorted(m for (m,) in rows))} if rows else set()
    return {tuple(sorted(r)) for r in rows}


def _lint_findings(g: rdflib.Graph, check: str) -> set[tuple[str, ...]]:
    found = {f.subjects for f in lint_graph(g).findings if f.check == check}
    if check == "hierarchy-loop":
        return {tuple(sorted(s for subj in found for s in subj))} if found else set()
    return found


def test_every_check_has_a_case_named_after_it():
    assert sorted(CASES) == sorted(f"lint-{c.name}" for c in CHECKS)
    for c in CHECKS:
        assert c.level in ("error", "warning")
        assert c.summary and c.summary[0].islower() and not c.summary.endswith(".")


def test_the_skos_reference_conditions_are_named():
    conditions = {c.name: c.skos_condition for c in CHECKS if c.skos_condition}
    assert conditions == {
        "label-kind-clash": "S13",
        "two-preferred-labels": "S14",
        "related-to-ancestor": "S27",
    }
    for c in CHECKS:
        assert c.standard.startswith("W3C SKOS Reference") == bool(c.skos_condition)
        assert (c.level == "error") or not c.skos_condition  # a broken condition is an error


def test_clean_vocabulary_is_quiet():
    report = lint_path(DATA / "lint-clean")
    assert report.findings == []
    assert report.concepts == 4


@pytest.mark.parametrize("case", CASES)
def test_each_fault_fires_exactly_its_check(case):
    report = lint_path(DATA / case / "skos.ttl")
    assert report.fired() == {case.removeprefix("lint-")}, [f.message for f in report.findings]


def test_findings_name_the_concepts():
    by_case = {case.removeprefix("lint-"): lint_path(DATA / case).findings for case in CASES}
    assert by_case["hierarchy-loop"][0].subjects == (EX + "rowing", EX + "sculling")
    assert by_case["unlinked-concept"][0].subjects == (EX + "chess",)
    assert by_case["shared-label"][0].subjects == (EX + "crew", EX + "rowing")
    # a concept is named by its preferred label beside its short name
    assert by_case["language-gap"][0].message == "rowing (rowing) has no preferred label in de"
    assert "U+0007" in by_case["control-character-in-label"][0].message
    assert by_case["top-concept-with-parent"][0].subjects == (EX + "paddling",)
    assert by_case["related-to-ancestor"][0].subjects == (EX + "canoe-polo", EX + "sport")


@pytest.mark.parametrize("check", sorted(SPARQL))
@pytest.mark.parametrize("case", ["lint-clean", *CASES])
def test_fixtures_agree_with_the_sparql_definitions(case, check):
    g = rdflib.Graph().parse(DATA / case / "skos.ttl", format="turtle")
    assert _lint_findings(g, check) == _sparql_findings(g, check)


def _random_vocabulary(seed: int) -> rdflib.Graph:
    """A small SKOS graph with random links and labels: loops, related pairs across
    levels, repeated texts across label kinds and languages all happen."""
    rnd = random.Random(seed)
    n = rnd.randint(3, 9)
    texts = ["oar", "Oar", "sail", "keel", "rudder"]
    lines = []
    for i in range(n):
        props = ["a skos:Concept"]
        for kind in ("prefLabel", "altLabel", "hiddenLabel"):
            for _ in range(rnd.choice([0, 1, 1, 2])):
                props.append(f'skos:{kind} "{rnd.choice(texts)}"@{rnd.choice(["en", "de"])}')
        for rel, share in (("broader", 0.35), ("narrower", 0.1), ("related", 0.12)):
            for j in range(n):
                if rnd.random() < share / 2:
                    props.append(f"skos:{rel} <{EX}c{j}>")
        lines.append(f"<{EX}c{i}> " + " ; ".join(props) + " .")
    ttl = "@prefix skos: <http://www.w3.org/2004/02/skos/core#> .\n" + "\n".join(lines)
    return rdflib.Graph().parse(data=ttl, format="turtle")


@pytest.mark.parametrize("check", sorted(SPARQL))
def test_random_vocabularies_agree_with_the_sparql_definitions(check):
    fired = 0
    for seed in range(60):
        g = _random_vocabulary(seed)
        ours, theirs = _lint_findings(g, check), _sparql_findings(g, check)
        assert ours == theirs, (seed, g.serialize(format="turtle"))
        fired += bool(ours)
    assert 0 < fired < 60  # the random vocabularies exercise both outcomes


def _g(ttl: str) -> rdflib.Graph:
    head = f"@prefix skos: <http://www.w3.org/2004/02/skos/core#> .\n@prefix ex: <{EX}> .\n"
    return rdflib.Graph().parse(data=head + ttl, format="turtle")


def test_skos_reference_integrity_conditions():
    # Crafted after the wording of the conditions in the W3C SKOS Reference (2009).
    # S14: at most one skos:prefLabel per language tag.
    s14 = _g('ex:oar skos:prefLabel "oar"@en ; skos:prefLabel "paddle"@en .')
    assert "two-preferred-labels" in lint_graph(s14).fired()
    ok = _g('ex:oar skos:prefLabel "oar"@en ; skos:prefLabel "Ruder"@de .')
    assert "two-preferred-labels" not in lint_graph(ok).fired()
    # S13: the three label properties are pairwise disjoint.
    s13 = _g('ex:oar skos:prefLabel "oar"@en ; skos:altLabel "oar"@en .')
    assert "label-kind-clash" in lint_graph(s13).fired()
    s13h = _g('ex:oar skos:altLabel "oar"@en ; skos:hiddenLabel "oar"@en ; skos:prefLabel "x"@en .')
    assert "label-kind-clash" in lint_graph(s13h).fired()
    # the same text in two languages is two different literals: no clash
    two_langs = _g('ex:oar skos:prefLabel "Oar"@en ; skos:altLabel "Oar"@de .')
    assert "label-kind-clash" not in lint_graph(two_langs).fired()
    # S27: skos:related is disjoint with skos:broaderTransitive, in either direction.
    s27 = _g("ex:a skos:broader ex:b . ex:b skos:broader ex:c . ex:c skos:related ex:a .")
    assert "related-to-ancestor" in lint_graph(s27).fired()
    siblings = _g("ex:a skos:broader ex:c . ex:b skos:broader ex:c . ex:a skos:related ex:b .")
    assert "related-to-ancestor" not in lint_graph(siblings).fired()


def test_deprecated_concepts_are_left_out_of_structure_checks():
    g = _g(
        """@prefix owl: <http://www.w3.org/2002/07/owl#> .
        ex: a skos:ConceptScheme ; skos:hasTopConcept ex:a .
        ex:a a skos:Concept ; skos:topConceptOf ex: ; skos:prefLabel "a"@en, "A"@de .
        ex:b a skos:Concept ; skos:broader ex:a ; skos:prefLabel "b"@en, "B"@de .
        ex:old a skos:Concept ; owl:deprecated true ; skos:prefLabel "old"@en ."""
    )
    assert lint_graph(g).findings == []


def test_words_written_with_a_zero_width_non_joiner_are_printable():
    # Persian writes common words with U+200C ZERO WIDTH NON-JOINER; the words come
    # from wordfreq's Persian list (PyPI package data), not from memory.
    wordfreq = pytest.importorskip("wordfreq")
    words = [w for w in wordfreq.top_n_list("fa", 2000) if "\u200c" in w and w.strip("\u200c")][:10]
    assert len(words) >= 5
    ttl = " ; ".join(f'skos:altLabel "{w}"@fa' for w in words)
    g = _g(f'ex:a skos:prefLabel "a"@fa ; {ttl} .')
    assert "control-character-in-label" not in lint_graph(g).fired()
    # while a joiner-free format character, U+200B ZERO WIDTH SPACE, is flagged
    g = _g('ex:a skos:prefLabel "a\u200bb"@fa .')
    assert "control-character-in-label" in lint_graph(g).fired()


def test_bad_turtle_names_file_and_line(tmp_path):
    bad = tmp_path / "skos.ttl"
    bad.write_text(
        "@prefix skos: <http://www.w3.org/2004/02/skos/core#> .\n"
        '<a> a skos:Concept .\n<b> skos:prefLabel "x\n'
    )
    with pytest.raises(ParseError) as exc:
        lint_path(bad)
    assert str(exc.value).startswith(f"{bad}:3: ")


def test_folder_without_skos_file(tmp_path):
    with pytest.raises(LintTargetError, match="no skos.ttl in this folder"):
        lint_path(tmp_path)


def test_cli_exit_codes_and_json(runner):
    ok = runner.invoke(cli, ["lint", str(DATA / "lint-clean")])
    assert ok.exit_code == 0, ok.output
    assert ok.output == f"{DATA / 'lint-clean'}: 4 concepts, 0 errors, 0 warnings\n"
    warn = runner.invoke(cli, ["lint", str(DATA / "lint-unlinked-concept")])
    assert warn.exit_code == 0  # warnings alone do not fail
    # en and de equally common: the label in the smaller tag (a folder without report.json)
    assert warn.output.startswith("warning: unlinked-concept: Schach (chess) has no broader")
    assert warn.output.endswith(", 0 errors, 1 warning\n")
    err = runner.invoke(cli, ["lint", "--json", str(DATA / "lint-hierarchy-loop")])
    assert err.exit_code == 1
    assert err.output.strip().splitlines()[-1].startswith("{")
    data = json.loads(err.output.strip().splitlines()[-1])
    assert data["counts"] == {"error": 1, "warning": 0}
    assert [f["check"] for f in data["findings"]] == ["hierarchy-loop"]
    assert data["findings"][0]["summary"] == next(
        c.summary for c in CHECKS if c.name == "hierarchy-loop"
    )
    standards = {c["name"]: c["standard"] for c in data["checks"]}
    assert standards["two-preferred-labels"].endswith("S14") and standards["blank-label"] == ""
    missing = runner.invoke(cli, ["lint", "nope.ttl"])
    assert missing.exit_code == 1 and missing.output == "Error: nope.ttl: no such file or folder\n"

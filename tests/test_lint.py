"""SKOS quality checks, each on a crafted vocabulary that has exactly its fault.

Source of the checks: Mader, Haslhofer and Isaac, "Finding Quality Issues in SKOS
Vocabularies", TPDL 2012 (catalogue entries named beside each case below).
"""

from __future__ import annotations

import json

import pytest
import rdflib
from conftest import DATA

from kgkit.cli import cli
from kgkit.errors import ParseError
from kgkit.release.lint import CHECKS, LintTargetError, lint_graph, lint_path

# case folder -> the one check that must fire (catalogue entry in the comment)
CASES = {
    "lint-orphan-concept": "unlinked-concept",  # Orphan Concepts
    "lint-disconnected-clusters": "split-hierarchy",  # Disconnected Concept Clusters
    "lint-cyclic-hierarchy": "hierarchy-loop",  # Cyclic Hierarchical Relations
    "lint-missing-label": "no-preferred-label",  # Missing Labels
    "lint-empty-label": "blank-label",  # Empty Labels
    "lint-overlapping-labels": "shared-label",  # Overlapping Labels
    "lint-inconsistent-preferred-labels": "two-preferred-labels",  # Inconsistent Preferred Labels
    "lint-disjoint-labels": "label-kind-clash",  # Disjoint Labels Violation
    "lint-incomplete-language-coverage": "language-gap",  # Incomplete Language Coverage
    "lint-omitted-top-concepts": "scheme-without-top",  # Omitted Top Concepts
    "lint-top-concept-with-broader": "top-concept-with-parent",  # Top Concept Having Broader
    "lint-unprintable-characters": "control-character-in-label",  # Unprintable Characters
}

EX = "http://example.org/vocab/lint/"


def test_every_check_has_a_case():
    assert sorted(CASES.values()) == sorted(c.name for c in CHECKS)
    for c in CHECKS:
        assert c.source.startswith("Mader, Haslhofer and Isaac")
        assert c.level in ("error", "warning")


def test_clean_vocabulary_is_quiet():
    report = lint_path(DATA / "lint-clean")
    assert report.findings == []
    assert report.concepts == 4


@pytest.mark.parametrize("case", sorted(CASES))
def test_each_fault_fires_exactly_its_check(case):
    report = lint_path(DATA / case / "skos.ttl")
    assert report.fired() == {CASES[case]}, [f.message for f in report.findings]


def test_findings_name_the_concepts():
    by_case = {case: lint_path(DATA / case).findings for case in CASES}
    assert by_case["lint-cyclic-hierarchy"][0].subjects == (EX + "rowing", EX + "sculling")
    assert by_case["lint-orphan-concept"][0].subjects == (EX + "chess",)
    assert by_case["lint-overlapping-labels"][0].subjects == (EX + "crew", EX + "rowing")
    assert by_case["lint-incomplete-language-coverage"][0].message == (
        f"{EX}rowing has no preferred label in de"
    )
    assert "U+0007" in by_case["lint-unprintable-characters"][0].message
    assert by_case["lint-top-concept-with-broader"][0].subjects == (EX + "paddling",)


def _g(ttl: str) -> rdflib.Graph:
    head = f"@prefix skos: <http://www.w3.org/2004/02/skos/core#> .\n@prefix ex: <{EX}> .\n"
    return rdflib.Graph().parse(data=head + ttl, format="turtle")


def test_skos_reference_integrity_examples():
    # W3C SKOS Reference (2009), section 5.6.5 (S14) and 5.6.6 (S13): the
    # "not consistent" examples, quoted from memory.
    s14 = _g('ex:love skos:prefLabel "love"@en ; skos:prefLabel "adoration"@en .')
    assert "two-preferred-labels" in lint_graph(s14).fired()
    s13 = _g('ex:love skos:prefLabel "love"@en ; skos:altLabel "love"@en .')
    assert "label-kind-clash" in lint_graph(s13).fired()
    s13h = _g(
        'ex:love skos:altLabel "love"@en ; skos:hiddenLabel "love"@en ; skos:prefLabel "x"@en .'
    )
    assert "label-kind-clash" in lint_graph(s13h).fired()
    # consistent per the same section: one preferred label per language
    ok = _g('ex:love skos:prefLabel "love"@en ; skos:prefLabel "amour"@fr .')
    assert "two-preferred-labels" not in lint_graph(ok).fired()


def test_deprecated_concepts_are_left_out_of_structure_checks():
    g = _g(
        """@prefix owl: <http://www.w3.org/2002/07/owl#> .
        ex: a skos:ConceptScheme ; skos:hasTopConcept ex:a .
        ex:a a skos:Concept ; skos:topConceptOf ex: ; skos:prefLabel "a"@en, "A"@de .
        ex:b a skos:Concept ; skos:broader ex:a ; skos:prefLabel "b"@en, "B"@de .
        ex:old a skos:Concept ; owl:deprecated true ; skos:prefLabel "old"@en ."""
    )
    assert lint_graph(g).findings == []


def test_zero_width_joiner_is_printable():
    # ZWNJ is an ordinary part of Persian words (Unicode Standard, ch. 23.2, from memory)
    g = _g('ex:a skos:prefLabel "\u0645\u06cc\u200c\u0634\u0648\u062f"@fa .')
    assert "control-character-in-label" not in lint_graph(g).fired()


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
    warn = runner.invoke(cli, ["lint", str(DATA / "lint-orphan-concept")])
    assert warn.exit_code == 0  # warnings alone do not fail
    assert warn.output.startswith(f"warning: unlinked-concept: {EX}chess has no broader")
    err = runner.invoke(cli, ["lint", "--json", str(DATA / "lint-cyclic-hierarchy")])
    assert err.exit_code == 1
    data = json.loads(err.output.strip().splitlines()[-1])
    assert data["counts"] == {"error": 1, "warning": 0}
    assert [f["check"] for f in data["findings"]] == ["hierarchy-loop"]
    assert data["findings"][0]["source"].endswith("Cyclic Hierarchical Relations")
    missing = runner.invoke(cli, ["lint", "nope.ttl"])
    assert missing.exit_code == 1 and missing.output == "Error: nope.ttl: no such file or folder\n"


def test_agrees_with_skosify_on_the_shared_checks():
    """Cross-check against skosify 2.3 (PyPI; National Library of Finland, from memory):
    its checks for broader cycles, S13 label overlap and S14 preferred-label uniqueness
    log a warning on exactly the vocabularies where our matching check fires."""
    import logging

    check = pytest.importorskip("skosify.check")

    class Collect(logging.Handler):
        def __init__(self):
            super().__init__(logging.DEBUG)
            self.messages = []

        def emit(self, record):
            self.messages.append(record.getMessage())

    theirs = {
        "hierarchy-loop": check.hierarchy_cycles,
        "label-kind-clash": check.label_overlap,
        # its default policy "all" is refused by skosify 2.3 itself; "shortest" reports too
        "two-preferred-labels": lambda g: check.preflabel_uniqueness(g, "shortest"),
    }
    root = logging.getLogger()
    for case in ["lint-clean", *sorted(CASES)]:
        ours = lint_path(DATA / case).fired()
        for name, fn in theirs.items():
            g = rdflib.Graph().parse(DATA / case / "skos.ttl", format="turtle")
            h, level = Collect(), root.level
            root.addHandler(h)
            root.setLevel(logging.DEBUG)
            try:
                fn(g)
            finally:
                root.removeHandler(h)
                root.setLevel(level)
            assert bool(h.messages) == (name in ours), (case, name, h.messages)

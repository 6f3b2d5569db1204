"""kgkit slice: the import's slicing, written to a file, with the closure under roots."""

from __future__ import annotations

import bz2
import gzip
import json

import pyoxigraph as ox
import pytest
from conftest import DATA, rdflib_graph
from rdflib.compare import isomorphic

from kgkit.errors import ParseError
from kgkit.ingest import ImportOptions, import_into_store, lines, make_slice
from kgkit.ingest.slice_dump import slice_dump

MESSY = DATA / "ingest-messy" / "messy.nt"
SKOS = "http://www.w3.org/2004/02/skos/core#"
RDFS = "http://www.w3.org/2000/01/rdf-schema#"
E = "http://example.org/e/"


def test_slice_keeps_what_an_import_with_the_same_options_loads(tmp_path, workspace):
    sl = make_slice(workspace, scope="profile", literal_languages=["en", "de"])
    out = tmp_path / "out.nt"
    s = slice_dump(workspace, [str(MESSY)], out, sl, on_error="skip")
    # hand counts (tests/data/ingest-messy/README.md): 8 kept + 2 duplicates written
    assert (s.read, s.written, s.filtered, s.rejected) == (19, 10, 4, 5)
    assert s.rejects == str(out) + ".rejects.txt"
    written = list(ox.parse(path=str(out), format=ox.RdfFormat.N_TRIPLES))
    assert len(written) == 10
    store = ox.Store()
    opts = ImportOptions(on_error="skip", rejects=tmp_path / "r.txt", slice=sl)
    imp = import_into_store(store, [str(MESSY)], "g", opts, workspace)
    loaded = store.quads_for_pattern(None, None, None, ox.NamedNode(imp.content))
    # isomorphic graphs (rdflib.compare.isomorphic): blank node labels differ
    assert isomorphic(rdflib_graph(written), rdflib_graph(loaded))


def test_slice_strict_mode_fails_and_writes_nothing(tmp_path, workspace):
    out = tmp_path / "out.nt"
    with pytest.raises(ParseError) as info:
        slice_dump(workspace, [str(MESSY)], out, make_slice(workspace, scope="profile"))
    assert str(info.value).startswith(f"{MESSY}:8:73: ")
    assert not out.exists()
    assert [p.name for p in tmp_path.iterdir()] == ["ws"]  # no temporary file left


HIERARCHY = "".join(
    f"{s} {p} {o} .\n"
    for s, p, o in [
        (f"<{E}a>", f"<{SKOS}prefLabel>", '"a"@en'),
        (f"<{E}b>", f"<{SKOS}broader>", f"<{E}a>"),
        (f"<{E}b>", f"<{SKOS}prefLabel>", '"b"@en'),
        (f"<{E}c>", f"<{RDFS}subClassOf>", f"<{E}b>"),  # second parent predicate
        (f"<{E}c>", "<http://example.org/p/size>", '"3"'),  # outside the profile
        (f"<{E}d>", f"<{SKOS}broader>", f"<{E}x>"),  # d has two parents: x and c
        (f"<{E}d>", f"<{SKOS}broader>", f"<{E}c>"),
        (f"<{E}x>", f"<{SKOS}prefLabel>", '"x"@en'),
        (f"<{E}y>", f"<{SKOS}broader>", f"<{E}x>"),
        ("_:n", f"<{SKOS}broader>", f"<{E}a>"),  # a blank node is not an entity to keep
    ]
)


@pytest.mark.parametrize("jobs", [1, 2])
def test_slice_roots_keeps_the_closure(tmp_path, workspace, monkeypatch, jobs):
    monkeypatch.setattr(lines, "CHUNK_BYTES", 200)
    src = tmp_path / "h.nt.bz2"
    src.write_bytes(bz2.compress(HIERARCHY.encode()))
    out = tmp_path / "out.nt.gz"
    sl = make_slice(workspace, scope="profile")
    s = slice_dump(workspace, [str(src)], out, sl, roots=[f"{E}a"], jobs=jobs)
    assert s.entities == 4  # a, b, c, d: d reaches a through c
    got = gzip.decompress(out.read_bytes()).decode("utf-8")
    expected = [
        f'<{E}a> <{SKOS}prefLabel> "a"@en .',
        f"<{E}b> <{SKOS}broader> <{E}a> .",
        f'<{E}b> <{SKOS}prefLabel> "b"@en .',
        f"<{E}c> <{RDFS}subClassOf> <{E}b> .",
        f"<{E}d> <{SKOS}broader> <{E}x> .",
        f"<{E}d> <{SKOS}broader> <{E}c> .",
    ]
    assert sorted(got.splitlines()) == sorted(expected)
    assert (s.read, s.written, s.filtered, s.rejected) == (10, 6, 4, 0)


def test_slice_output_is_the_same_for_any_number_of_workers(tmp_path, workspace, monkeypatch):
    monkeypatch.setattr(lines, "CHUNK_BYTES", 300)
    sl = make_slice(workspace, scope="profile", literal_languages=["en"])
    one, two = tmp_path / "1.nt", tmp_path / "2.nt"
    s1 = slice_dump(workspace, [str(MESSY)], one, sl, on_error="skip", jobs=1)
    s2 = slice_dump(workspace, [str(MESSY)], two, sl, on_error="skip", jobs=2)
    assert one.read_bytes() == two.read_bytes()
    assert s1.to_dict() | {"seconds": 0, "output": "", "rejects": ""} == s2.to_dict() | {
        "seconds": 0,
        "output": "",
        "rejects": "",
    }


def test_cli_slice_json(kgkit, tmp_path):
    out = tmp_path / "s.nt"
    r = kgkit(
        "slice",
        str(MESSY),
        "-o",
        str(out),
        "--literal-languages",
        "en,de",
        "--on-error",
        "skip",
        "--json",
        "--jobs",
        "1",
    )
    assert r.exit_code == 0, r.output
    d = json.loads(r.output.strip().splitlines()[-1])
    assert (d["read"], d["written"], d["filtered"], d["rejected"]) == (19, 10, 4, 5)
    r = kgkit("slice", str(MESSY), "-o", str(tmp_path / "t.nt"))
    assert r.exit_code == 1
    assert r.output.startswith(f"Error: {MESSY}:8:73: ")
    turtle = tmp_path / "doc.ttl"
    turtle.write_text("<http://a> <http://b> <http://c> .\n", encoding="utf-8")
    r = kgkit("slice", str(turtle), "-o", str(tmp_path / "u.nt"))
    assert r.exit_code == 1 and "line-based formats" in r.output
    r = kgkit("slice", str(DATA / "nothing.ttl"), "-o", str(tmp_path / "u.nt"))
    assert r.exit_code == 1 and r.output.endswith("nothing.ttl: no such file\n")


def test_slice_output_keeps_input_order_whatever_the_chunks(tmp_path, workspace, monkeypatch):
    sl = make_slice(workspace, scope="all")
    outs = []
    for size in (120, 1 << 20):
        monkeypatch.setattr(lines, "CHUNK_BYTES", size)
        out = tmp_path / f"{size}.nt"
        slice_dump(workspace, [str(MESSY)], out, sl, on_error="skip")
        outs.append(out.read_text(encoding="utf-8"))
    assert outs[0] == outs[1]
    # the good lines of the messy dump, in their order, blank nodes relabelled per file
    got = outs[0].splitlines()
    assert len(got) == 14
    assert got[0].endswith('"canoe polo"@en .') and got[3] == got[0]
    assert got[6].startswith("_:f1xn1 ") and got[-1].endswith(f"<{E}2> .")

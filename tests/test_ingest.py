"""The importer (kgkit.ingest): counts, rejects, slicing, blank nodes, all-or-nothing."""

from __future__ import annotations

import bz2
import gzip
import json
import lzma
import re
from pathlib import Path

import pyoxigraph as ox
import pytest
import zstandard
from conftest import DATA

from kgkit.errors import KgkitError, ParseError
from kgkit.ingest import ImportOptions, import_files, import_into_store, make_slice
from kgkit.store import current_graphs, list_graphs, open_store

MESSY = DATA / "ingest-messy" / "messy.nt"
SKOS = "http://www.w3.org/2004/02/skos/core#"
E = "http://example.org/e/"

# The messy dump, counted by hand (see the comment beside each line in tests/data/ingest-messy/
# README.md): 23 lines, 19 of them statements; 5 bad (8 unterminated literal, 9 missing dot,
# 11 space in an IRI, 12 bad language tag, 23 missing dot on the last line, no newline);
# 2 duplicates (6 = 2, 21 = 14 through the same blank node); 2 statements outside the profile
# (7, 17) and 2 labels in languages other than en/de (4 fr, 19 es).
MESSY_BAD_LINES = {8, 9, 11, 12, 23}
MESSY_ALL = {"read": 19, "loaded": 12, "duplicates": 2, "filtered": 0, "rejected": 5}
MESSY_SLICED = {"read": 19, "loaded": 8, "duplicates": 2, "filtered": 4, "rejected": 5}

CLEAN = "".join(
    f'<{E}{i}> <{SKOS}prefLabel> "topic {i}"@en .\n'
    f'<{E}{i}> <{SKOS}prefLabel> "Thema {i}"@de .\n'
    f"<{E}{i}> <{SKOS}broader> <{E}{i // 2}> .\n"
    f'<{E}{i}> <http://example.org/p/size> "{i}"^^<http://www.w3.org/2001/XMLSchema#integer> .\n'
    for i in range(1, 200)
)


def _counts(summary) -> dict[str, int]:
    return {
        k: getattr(summary, k) for k in ("read", "loaded", "duplicates", "filtered", "rejected")
    }


def _snapshot(store: ox.Store) -> set[str]:
    """Every quad of the store, provenance included."""
    return {str(q) for q in store}


def _content(store: ox.Store, graph: str) -> set[str]:
    g = current_graphs(store)[graph]
    return {
        str(ox.Triple(q.subject, q.predicate, q.object))
        for q in store.quads_for_pattern(None, None, None, ox.NamedNode(g))
    }


def _rejects(path: Path) -> dict[int, str]:
    """line number -> verbatim text, from a rejects file."""
    out: dict[int, str] = {}
    lines = path.read_text(encoding="utf-8").split("\n")
    assert lines[-1] == ""
    for head, text in zip(lines[0:-1:2], lines[1:-1:2], strict=True):
        m = re.match(r"^# .*messy\.nt:(\d+)(?::\d+)?: \S", head)
        assert m, head
        out[int(m.group(1))] = text
    return out


def _messy_lines() -> dict[int, str]:
    text = MESSY.read_text(encoding="utf-8")
    return {n: line.rstrip("\r") for n, line in enumerate(text.split("\n"), 1)}


@pytest.mark.parametrize("batch", [1, 2, 3, 5, 1000])
def test_messy_dump_counts_reconcile_and_rejects_exactly_the_bad_lines(tmp_path, batch):
    store = ox.Store()
    rejects = tmp_path / "rejects.txt"
    opts = ImportOptions(on_error="skip", rejects=rejects, batch_size=batch)
    s = import_into_store(store, [str(MESSY)], "messy", opts)
    assert _counts(s) == MESSY_ALL
    got = _rejects(rejects)
    assert set(got) == MESSY_BAD_LINES
    lines = _messy_lines()
    for n, text in got.items():
        assert text == lines[n]
    # every good statement is loaded: all good lines, parsed one by one, are in the graph
    content = _content(store, "messy")
    good = [lines[n] for n in lines if n not in MESSY_BAD_LINES]
    statements = []
    for line in good:
        for t in ox.parse(input=line.encode(), format=ox.RdfFormat.N_TRIPLES):
            statements.append(tuple(x.value if isinstance(x, ox.BlankNode) else str(x) for x in t))
            if isinstance(t.subject, ox.BlankNode) or isinstance(t.object, ox.BlankNode):
                continue
            assert str(t) in content
    # the counts, each computed here on its own (not as the remainder of the others):
    # distinct good statements are loaded, the repeats are duplicates, the bad lines
    # rejected, and the lines read are all statement lines of the file
    assert s.loaded == len(set(statements)) == len(content)
    assert s.duplicates == len(statements) - len(set(statements))
    assert s.rejected == len(MESSY_BAD_LINES)
    statement_lines = [x for x in lines.values() if x.strip() and not x.lstrip().startswith("#")]
    assert s.read == len(statement_lines)
    # one blank node _:n1 across batches: its four statements share one node
    bnode = [
        q.subject
        for q in store.quads_for_pattern(None, ox.NamedNode(SKOS + "prefLabel"), None)
        if isinstance(q.subject, ox.BlankNode)
    ]
    assert len(bnode) == 1
    node = bnode[0]
    assert {str(q.predicate) for q in store.quads_for_pattern(node, None, None)} == {
        f"<{SKOS}prefLabel>",
        f"<{SKOS}broader>",
        f"<{SKOS}altLabel>",
    }
    assert len(list(store.quads_for_pattern(None, None, node))) == 1


@pytest.mark.parametrize("batch", [2, 1000])
def test_messy_dump_sliced_by_profile_and_languages(tmp_path, workspace, batch):
    sl = make_slice(workspace, scope="profile", literal_languages=["en", "de"])
    store = ox.Store()
    opts = ImportOptions(on_error="skip", rejects=tmp_path / "r.txt", slice=sl, batch_size=batch)
    s = import_into_store(store, [str(MESSY)], "messy", opts, workspace)
    assert _counts(s) == MESSY_SLICED
    content = _content(store, "messy")
    assert not any("p/length" in t or "p/near" in t for t in content)
    assert not any('"@fr' in t or "@fr " in t or "@es " in t for t in content)
    assert f'<{E}1> <{SKOS}prefLabel> "Kanupolo"@de' in content


def test_messy_dump_strict_mode_stops_at_first_bad_line():
    store = ox.Store()
    with pytest.raises(ParseError) as info:
        import_into_store(store, [str(MESSY)], "messy", ImportOptions(batch_size=3))
    # the unterminated literal starts at column 73 (the opening quote), line 8
    assert str(info.value).startswith(f"{MESSY}:8:73: ")
    assert "on_error='skip'" in str(info.value)
    assert len(store) == 0


@pytest.mark.parametrize(
    "line, column, cause",
    [
        (9, 96, "dot"),  # missing dot: reported just past the end of the line
        (11, 72, "invalid iri"),
        (12, 81, "language"),
    ],
)
def test_error_messages_name_line_and_column(tmp_path, line, column, cause):
    lines = _messy_lines()
    path = tmp_path / "one.nt"
    path.write_text(lines[2] + "\n" + lines[line] + "\n" + lines[3] + "\n", encoding="utf-8")
    with pytest.raises(ParseError) as info:
        import_into_store(ox.Store(), [str(path)], "g", ImportOptions())
    assert (info.value.line, info.value.column) == (2, column)
    assert cause in info.value.cause.lower()


def test_failed_import_leaves_store_exactly_as_before(workspace, tmp_path):
    good = tmp_path / "good.nt"
    good.write_text(CLEAN, encoding="utf-8")
    import_files(workspace, [str(good)], ImportOptions(graph="topics"))
    with open_store(workspace.store_path) as store:
        before = _snapshot(store)
    assert any("provenance" in q for q in before)
    # a first import of a new graph fails; then a replacement of an existing graph fails,
    # both after several batches have been written
    bad = tmp_path / "bad.nt"
    bad.write_text(CLEAN + '<http://example.org/x> <http://example.org/p> "open .\n')
    for graph in ("fresh", "topics"):
        with pytest.raises(ParseError):
            import_files(workspace, [str(bad)], ImportOptions(graph=graph, batch_size=300))
        with open_store(workspace.store_path) as store:
            assert _snapshot(store) == before
    # a truncated compressed file fails too, mid-stream
    trunc = tmp_path / "trunc.nt.gz"
    trunc.write_bytes(gzip.compress((CLEAN * 5).encode())[:-200])
    with pytest.raises(KgkitError, match="damaged gzip data"):
        import_files(workspace, [str(trunc)], ImportOptions(graph="topics", batch_size=1000))
    with open_store(workspace.store_path) as store:
        assert _snapshot(store) == before


def test_replacing_a_graph_drops_the_old_content(workspace, tmp_path):
    first = tmp_path / "first.nt"
    first.write_text(CLEAN, encoding="utf-8")
    second = tmp_path / "second.nt"
    second.write_text(f'<{E}new> <{SKOS}prefLabel> "new"@en .\n', encoding="utf-8")
    (s1,) = import_files(workspace, [str(first)], ImportOptions(graph="topics"))
    (s2,) = import_files(workspace, [str(second)], ImportOptions(graph="topics"))
    assert not s1.replaced and s2.replaced
    with open_store(workspace.store_path) as store:
        assert _content(store, "topics") == {f'<{E}new> <{SKOS}prefLabel> "new"@en'}
        names = {g.value for g in store.named_graphs()}
        assert s1.content not in names and s2.content in names
        (info,) = list_graphs(store)
        assert info.counts["loaded"] == 1 and info.files[0].name == "second.nt"


@pytest.mark.parametrize(
    "suffix, compress",
    [
        (".gz", gzip.compress),
        (".bz2", bz2.compress),
        (".xz", lzma.compress),
        (".zst", lambda b: zstandard.ZstdCompressor().compress(b)),
        # named as plain data: told by magic bytes, not by the name
        (".dat", lzma.compress),
        (".dat", gzip.compress),
    ],
)
def test_compressed_input_gives_the_same_graph(tmp_path, suffix, compress):
    plain = tmp_path / "plain.nt"
    plain.write_text(CLEAN, encoding="utf-8")
    packed = tmp_path / f"packed.nt{suffix}" if suffix != ".dat" else tmp_path / "x.dat"
    packed.write_bytes(compress(CLEAN.encode()))
    a, b = ox.Store(), ox.Store()
    sa = import_into_store(a, [str(plain)], "g", ImportOptions(format="nt"))
    sb = import_into_store(b, [str(packed)], "g", ImportOptions(format="nt", batch_size=100))
    assert _content(a, "g") == _content(b, "g")
    assert (
        _counts(sa)
        == _counts(sb)
        == {
            "read": 796,
            "loaded": 796,
            "duplicates": 0,
            "filtered": 0,
            "rejected": 0,
        }
    )
    (info,) = list_graphs(b)
    assert info.files[0].compression != "none"
    assert info.files[0].size == packed.stat().st_size


def test_blank_nodes_are_scoped_per_file(tmp_path):
    a = tmp_path / "a.nt"
    b = tmp_path / "b.nt"
    a.write_text(f'_:x <{SKOS}prefLabel> "from a"@en .\n', encoding="utf-8")
    b.write_text(f'_:x <{SKOS}prefLabel> "from b"@en .\n', encoding="utf-8")
    store = ox.Store()
    s = import_into_store(store, [str(a), str(b)], "g", ImportOptions())
    subjects = {q.subject for q in store.quads_for_pattern(None, None, None) if q.graph_name}
    assert s.loaded == 2
    assert len({x for x in subjects if isinstance(x, ox.BlankNode)}) == 2


def test_turtle_skip_mode_sets_bad_statements_aside(tmp_path):
    ttl = tmp_path / "t.ttl"
    ttl.write_text(
        "@prefix s: <http://www.w3.org/2004/02/skos/core#> .\n"
        '<http://example.org/a> s:prefLabel "a"@en .\n'
        '<http://example.org/b> s:prefLabel "b"@en ; s:broader <bad iri> .\n'
        '<http://example.org/c> s:prefLabel "c"@en .\n',
        encoding="utf-8",
    )
    store = ox.Store()
    rejects = tmp_path / "r.txt"
    s = import_into_store(
        store, [str(ttl)], "g", ImportOptions(format="ttl", on_error="skip", rejects=rejects)
    )
    assert s.rejected == 1
    assert s.read == s.loaded + s.duplicates + s.filtered + s.rejected
    text = rejects.read_text(encoding="utf-8")
    assert re.match(r"^# .*t\.ttl:3:\d+: ", text)
    assert "s:broader <bad iri>" in text
    content = _content(store, "g")
    assert (
        '<http://example.org/a> <http://www.w3.org/2004/02/skos/core#prefLabel> "a"@en' in content
    )
    assert (
        '<http://example.org/c> <http://www.w3.org/2004/02/skos/core#prefLabel> "c"@en' in content
    )
    with pytest.raises(ParseError, match=r"t\.ttl:3:"):
        import_into_store(ox.Store(), [str(ttl)], "g", ImportOptions(format="ttl"))


def test_jsonld_named_graphs_stay_inside_the_import(tmp_path):
    doc = {
        "@id": "http://example.org/g",
        "@graph": [{"@id": "http://example.org/s", "http://example.org/p": "x"}],
        "http://example.org/q": "y",
    }
    path = tmp_path / "d.jsonld"
    path.write_text(json.dumps(doc), encoding="utf-8")
    store = ox.Store()
    s = import_into_store(store, [str(path)], "g", ImportOptions())
    assert s.loaded == 2
    names = {g.value for g in store.named_graphs()}
    assert names == {s.content, "urn:kgkit:provenance"}


# -- entity records --------------------------------------------------------

RECORDS_GOOD = [
    {
        "id": "ex:canoe-polo",
        "names": {"en": "canoe polo", "de": "Kanupolo"},
        "other_names": {"en": ["kayak polo"]},
        "hidden_names": {"en": ["canoepolo"]},
        "summary": {"en": "team sport played in canoes"},
        "parents": ["ex:paddle-sports"],
        "kinds": ["ex:Sport"],
        "same_as": ["<http://example.org/graph/kayak-polo>"],
        "code": "WS-12",
        "facts": [
            {"p": "ex:playedAt", "o": "ex:lakeport"},
            {"p": "ex:season", "text": "summer", "lang": "en"},
            {"p": "ex:players", "value": "5", "type": "xsd:integer"},
        ],
    },
    {"id": "http://example.org/paddle-sports", "names": {"": "paddle sports"}},
]


def _records_workspace(workspace):
    path = workspace.root / "kgkit.yaml"
    text = path.read_text(encoding="utf-8")
    path.write_text(text.replace("prefixes:\n", "prefixes:\n  ex: http://example.org/\n", 1))
    from kgkit.workspace import load_workspace

    return load_workspace(workspace.root)


def test_entity_records_map_every_field(tmp_path, workspace):
    ws = _records_workspace(workspace)
    path = tmp_path / "r.jsonl"
    path.write_text("\n".join(json.dumps(r) for r in RECORDS_GOOD) + "\n", encoding="utf-8")
    store = ox.Store()
    s = import_into_store(store, [str(path)], "r", ImportOptions(), ws)
    ex, xsd = "http://example.org/", "http://www.w3.org/2001/XMLSchema#"
    c = f"<{ex}canoe-polo>"
    expected = {
        f'{c} <{SKOS}prefLabel> "canoe polo"@en',
        f'{c} <{SKOS}prefLabel> "Kanupolo"@de',
        f'{c} <{SKOS}altLabel> "kayak polo"@en',
        f'{c} <{SKOS}hiddenLabel> "canoepolo"@en',
        f'{c} <{SKOS}definition> "team sport played in canoes"@en',
        f"{c} <{SKOS}broader> <{ex}paddle-sports>",
        f"{c} <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> <{ex}Sport>",
        f"{c} <http://www.w3.org/2002/07/owl#sameAs> <{ex}graph/kayak-polo>",
        f'{c} <{SKOS}notation> "WS-12"',
        f"{c} <{ex}playedAt> <{ex}lakeport>",
        f'{c} <{ex}season> "summer"@en',
        f'{c} <{ex}players> "5"^^<{xsd}integer>',
        f'<{ex}paddle-sports> <{SKOS}prefLabel> "paddle sports"',
    }
    assert _content(store, "r") == expected
    assert _counts(s) == {
        "read": 13,
        "loaded": 13,
        "duplicates": 0,
        "filtered": 0,
        "rejected": 0,
    }


def test_bad_entity_records_are_rejected_with_line_and_column(tmp_path, workspace):
    ws = _records_workspace(workspace)
    lines = [
        json.dumps(RECORDS_GOOD[1]),  # 1 good: 1 statement
        '{"id": "ex:a", "names": {"en": "a"',  # 2 malformed JSON (column 35)
        json.dumps({"id": "ex:b", "colour": "red"}),  # 3 unknown field
        json.dumps({"names": {"en": "no id"}}),  # 4 no id
        json.dumps({"id": "ex:c", "names": {"e n": "bad tag"}}),  # 5 bad language tag
        "",  # 6 blank
        json.dumps({"id": "ex:d", "names": {"en": "d"}, "parents": ["ex:a"]}),  # 7 good: 2
    ]
    path = tmp_path / "r.jsonl"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    with pytest.raises(ParseError) as info:
        import_into_store(ox.Store(), [str(path)], "r", ImportOptions(), ws)
    assert (info.value.line, info.value.column) == (2, 35)
    rejects = tmp_path / "rej.txt"
    store = ox.Store()
    s = import_into_store(
        store, [str(path)], "r", ImportOptions(on_error="skip", rejects=rejects), ws
    )
    assert _counts(s) == {"read": 7, "loaded": 3, "duplicates": 0, "filtered": 0, "rejected": 4}
    heads = [x for x in rejects.read_text(encoding="utf-8").splitlines() if x.startswith("# ")]
    assert [int(re.search(r"r\.jsonl:(\d+)", h).group(1)) for h in heads] == [2, 3, 4, 5]
    assert "unknown field 'colour'" in heads[1]
    assert "no 'id'" in heads[2]
    assert "language tag" in heads[3]


def test_rejects_default_path_and_explicit_path(workspace, tmp_path):
    (s,) = import_files(workspace, [str(MESSY)], ImportOptions(on_error="skip"))
    default = workspace.root / ".kgkit" / "rejects" / "messy.rejects.txt"
    assert s.rejects == str(default)
    assert set(_rejects(default)) == MESSY_BAD_LINES
    other = tmp_path / "mine.txt"
    (s,) = import_files(workspace, [str(MESSY)], ImportOptions(on_error="skip", rejects=other))
    assert s.rejects == str(other) and set(_rejects(other)) == MESSY_BAD_LINES


@pytest.mark.parametrize("scope", ["all", "profile"])
def test_bounded_windows_after_errors_lose_nothing(tmp_path, workspace, monkeypatch, scope):
    # after a bad line the rest of a batch is parsed in windows; make them tiny
    from kgkit.ingest import lines

    monkeypatch.setattr(lines, "_AFTER_ERROR_WINDOW", 2)
    sl = make_slice(workspace, scope=scope)
    opts = ImportOptions(on_error="skip", rejects=tmp_path / "r.txt", slice=sl)
    s = import_into_store(ox.Store(), [str(MESSY)], "messy", opts, workspace)
    expected = MESSY_ALL if scope == "all" else {**MESSY_ALL, "loaded": 10, "filtered": 2}
    assert _counts(s) == expected
    assert set(_rejects(tmp_path / "r.txt")) == MESSY_BAD_LINES


def test_several_inputs_make_several_graphs_and_refuse_one_rejects_file(workspace, tmp_path):
    a, b = tmp_path / "alpha.nt", tmp_path / "beta.nt.gz"
    a.write_text(CLEAN, encoding="utf-8")
    b.write_bytes(gzip.compress(CLEAN.encode()))
    with pytest.raises(KgkitError, match="rejects=PATH names one file"):
        import_files(
            workspace, [str(a), str(b)], ImportOptions(on_error="skip", rejects=tmp_path / "r")
        )
    summaries = import_files(workspace, [str(a), str(b)], ImportOptions())
    assert [s.graph for s in summaries] == ["alpha", "beta"]
    with open_store(workspace.store_path) as store:
        assert _content(store, "alpha") == _content(store, "beta")
    with pytest.raises(KgkitError, match="both import into graph 'alpha'"):
        import_files(workspace, [str(a), str(tmp_path / "alpha.nt")], ImportOptions())

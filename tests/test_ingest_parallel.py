"""Parallel import (--jobs): the same counts, rejects and graph as the serial path."""

from __future__ import annotations

import gzip
import json

import pyoxigraph as ox
import pytest
from conftest import DATA

from kgkit.ingest import ImportOptions, import_into_store, lines, make_slice

MESSY = DATA / "ingest-messy" / "messy.nt"
SKOS = "http://www.w3.org/2004/02/skos/core#"


def _counts(s) -> dict[str, int]:
    return {k: getattr(s, k) for k in ("read", "loaded", "duplicates", "filtered", "rejected")}


def _graph(store: ox.Store, content: str) -> set[tuple]:
    """The content graph with blank nodes named by what they are attached to.

    Serial and parallel imports name blank nodes alike (label scoped per file), so the
    sets can be compared directly.
    """
    return {
        (str(q.subject), str(q.predicate), str(q.object))
        for q in store.quads_for_pattern(None, None, None, ox.NamedNode(content))
    }


def _run(path, fmt, opts_kw, ws, tmp_path, tag):
    rejects = tmp_path / f"rejects-{tag}.txt"
    store = ox.Store()
    opts = ImportOptions(format=fmt, on_error="skip", rejects=rejects, **opts_kw)
    s = import_into_store(store, [str(path)], "g", opts, ws)
    return _counts(s), _graph(store, s.content), rejects.read_text(encoding="utf-8")


@pytest.mark.parametrize("scope", ["all", "profile"])
@pytest.mark.parametrize("fmt", ["nt", "nq"])
def test_parallel_equals_serial_on_the_messy_dump(tmp_path, workspace, monkeypatch, scope, fmt):
    # chunks of ~300 bytes: the 2.3 kB dump is cut into several chunks, across blank nodes
    monkeypatch.setattr(lines, "CHUNK_BYTES", 300)
    sl = make_slice(
        workspace, scope=scope, literal_languages=["en", "de"] if scope == "profile" else None
    )
    serial = _run(MESSY, fmt, {"slice": sl, "batch_size": 4}, workspace, tmp_path, "s")
    parallel = _run(MESSY, fmt, {"slice": sl, "batch_size": 4, "jobs": 2}, workspace, tmp_path, "p")
    assert serial == parallel
    expected = (
        {"read": 19, "loaded": 12, "duplicates": 2, "filtered": 0, "rejected": 5}
        if scope == "all"
        else {"read": 19, "loaded": 8, "duplicates": 2, "filtered": 4, "rejected": 5}
    )
    assert parallel[0] == expected


def test_parallel_strict_mode_reports_the_first_bad_line(workspace, monkeypatch):
    monkeypatch.setattr(lines, "CHUNK_BYTES", 300)
    from kgkit.errors import ParseError

    store = ox.Store()
    sl = make_slice(workspace, scope="profile")
    with pytest.raises(ParseError) as info:
        import_into_store(store, [str(MESSY)], "g", ImportOptions(slice=sl, jobs=2), workspace)
    assert str(info.value).startswith(f"{MESSY}:8:73: ")
    assert len(store) == 0


def test_parallel_records_and_compressed_input(tmp_path, workspace, monkeypatch):
    monkeypatch.setattr(lines, "CHUNK_BYTES", 500)
    path = workspace.root / "kgkit.yaml"
    path.write_text(
        path.read_text(encoding="utf-8").replace(
            "prefixes:\n", "prefixes:\n  ex: http://example.org/\n", 1
        )
    )
    from kgkit.workspace import load_workspace

    ws = load_workspace(workspace.root)
    recs = []
    for i in range(60):
        if i % 17 == 5:
            recs.append('{"id": "ex:broken"')
            continue
        recs.append(
            json.dumps(
                {
                    "id": f"ex:t{i}",
                    "names": {"en": f"topic {i}", "fr": f"sujet {i}"},
                    "parents": [f"ex:t{i // 2}"],
                    "facts": [{"p": "ex:size", "value": str(i)}],
                }
            )
        )
    src = tmp_path / "r.jsonl.gz"
    src.write_bytes(gzip.compress(("\n".join(recs) + "\n").encode()))
    sl = make_slice(ws, scope="profile", literal_languages=["en"])
    serial = _run(src, "records", {"slice": sl}, ws, tmp_path, "s")
    parallel = _run(src, "records", {"slice": sl, "jobs": 2}, ws, tmp_path, "p")
    assert serial == parallel
    # 4 broken lines (5, 22, 39, 56 counted from 0); 56 good records of 4 statements
    assert serial[0] == {
        "read": 56 * 4 + 4,
        "loaded": 56 * 2,
        "duplicates": 0,
        "filtered": 56 * 2,
        "rejected": 4,
    }
    assert [ln.split(":")[1] for ln in serial[2].splitlines() if ln.startswith("# ")] == [
        "6",
        "23",
        "40",
        "57",
    ]


@pytest.mark.parametrize(
    "data, n",
    [
        (b"", 0),
        (b"<a> <b> <c> .", 1),
        (b"# only a comment\n", 0),
        (b"\n\n  \t\n<a> <b> <c> .\n", 1),
        (b" <a> <b> <c> .\n#x\n\r\n<a> <b> <d> .", 2),
    ],
)
def test_count_statements(data, n):
    assert lines.count_statements(data) == n
    assert n == sum(1 for x in lines.split_lines(data) if lines.is_statement(x))


def test_byte_chunks_are_cut_at_line_ends_with_their_first_line_numbers():
    import io

    text = b"".join(b"line %d\n" % i for i in range(1, 101)) + b"no newline at the end"
    chunks = list(lines.iter_byte_chunks(io.BytesIO(text), 64))
    assert b"".join(d for _, d in chunks) == text
    for first, data in chunks:
        assert data.endswith(b"\n") or data == b"no newline at the end"
        assert data.startswith(b"line %d\n" % first) or first == 101
    assert chunks[-1][0] == 101

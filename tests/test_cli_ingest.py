"""kgkit import and kgkit graphs, through the command line."""

from __future__ import annotations

import gzip
import json
import lzma
import os
import subprocess
import sys
import textwrap

import pyoxigraph as ox
import pytest
from conftest import DATA, W3C

from kgkit.store import current_graphs, open_store

MESSY = DATA / "ingest-messy" / "messy.nt"
SKOS = "http://www.w3.org/2004/02/skos/core#"
NT = "".join(
    f'<http://example.org/e/{i}> <{SKOS}prefLabel> "topic {i}"@en .\n'
    f"<http://example.org/e/{i}> <{SKOS}broader> <http://example.org/e/{i // 3}> .\n"
    for i in range(1, 40)
)
SUMMARY_KEYS = {"graph", "read", "loaded", "duplicates", "filtered", "rejected", "seconds"}


def _last_json(output: str) -> dict:
    last = output.rstrip("\n").split("\n")[-1]
    return json.loads(last)


def _store_quads(workspace) -> set[str]:
    with open_store(workspace.store_path) as store:
        return {str(q) for q in store}


def test_import_prints_reconciled_summary(kgkit, workspace):
    r = kgkit("import", str(MESSY), "--on-error", "skip", "--batch-size", "3")
    assert r.exit_code == 0, r.output
    lines = r.output.splitlines()
    assert lines[0].startswith("graph messy created from messy.nt in ")
    assert [x.split()[0] for x in lines[1:6]] == [
        "read",
        "loaded",
        "duplicates",
        "filtered",
        "rejected",
    ]
    assert [int(x.split()[1]) for x in lines[1:6]] == [19, 12, 2, 0, 5]
    assert lines[6] == (
        "  rejected statements set aside in "
        f"{workspace.root / '.kgkit' / 'rejects' / 'messy.rejects.txt'}"
    )


def test_import_json_summary_is_the_last_line(kgkit):
    r = kgkit(
        "import",
        str(MESSY),
        "--on-error",
        "skip",
        "--scope",
        "profile",
        "--literal-languages",
        "en,de",
        "--json",
        "--graph",
        "sliced",
    )
    assert r.exit_code == 0, r.output
    d = _last_json(r.output)
    assert set(d) >= SUMMARY_KEYS
    assert {k: d[k] for k in SUMMARY_KEYS - {"seconds"}} == {
        "graph": "sliced",
        "read": 19,
        "loaded": 8,
        "duplicates": 2,
        "filtered": 4,
        "rejected": 5,
    }
    assert isinstance(d["seconds"], float)


def test_strict_import_fails_with_file_line_column(kgkit, workspace):
    before = _store_quads(workspace)
    r = kgkit("import", str(MESSY))
    assert r.exit_code == 1
    assert r.output.strip().splitlines() == [
        f"Error: {MESSY}:8:73: string literal not closed on this line; "
        "run with --on-error skip to set bad statements aside"
    ]
    assert _store_quads(workspace) == before


def test_import_stdin_and_quiet(kgkit, workspace):
    r = kgkit("import", "-", "--format", "nt", "--quiet", "--json", input=NT)
    assert r.exit_code == 0, r.output
    d = _last_json(r.output)
    assert d["graph"] == "stdin" and d["loaded"] == 78 and d["read"] == 78
    r = kgkit("import", "-", "--format", "nt", "--graph", "piped", "--quiet", input=NT)
    assert r.exit_code == 0, r.output
    assert r.output.startswith("graph piped created from - in ")
    r = kgkit("import", "-", input=NT)
    assert r.exit_code == 1
    assert "give --format" in r.output


@pytest.mark.parametrize("compress", [gzip.compress, lzma.compress], ids=["gzip", "xz"])
def test_compressed_file_named_dat_with_format(kgkit, workspace, tmp_path, compress):
    path = tmp_path / "x.dat"
    path.write_bytes(compress(NT.encode()))
    r = kgkit("import", str(path), "--format", "nt", "--json")
    assert r.exit_code == 0, r.output
    d = _last_json(r.output)
    assert d["graph"] == "x.dat"
    assert d["loaded"] == 78
    with open_store(workspace.store_path) as store:
        g = current_graphs(store)[d["graph"]]
        assert len(list(store.quads_for_pattern(None, None, None, ox.NamedNode(g)))) == 78


def test_graphs_lists_provenance(kgkit, tmp_path):
    r = kgkit("graphs")
    assert r.output == "no graphs yet; import one with: kgkit import FILE\n"
    path = tmp_path / "topics.nt.gz"
    path.write_bytes(gzip.compress(NT.encode(), mtime=0))
    assert kgkit("import", str(path), "--quiet").exit_code == 0
    r = kgkit("graphs")
    assert r.exit_code == 0, r.output
    lines = r.output.splitlines()
    assert lines[0].startswith("topics  78 statements  (import 1, 20")
    assert lines[1].startswith(f"  topics.nt.gz  nt, gzip, {path.stat().st_size:,} bytes, sha256 ")
    assert lines[2] == "  read 78 = loaded 78 + duplicates 0 + filtered 0 + rejected 0"
    import hashlib

    sha = hashlib.sha256(path.read_bytes()).hexdigest()
    r = kgkit("graphs", "--json")
    d = json.loads(r.output)
    assert d["files"] == [
        {
            "name": "topics.nt.gz",
            "size": path.stat().st_size,
            "sha256": sha,
            "format": "nt",
            "compression": "gzip",
        }
    ]
    assert (d["graph"], d["read"], d["loaded"], d["import"]) == ("topics", 78, 78, 1)
    assert d["started"] <= d["ended"]


def test_second_process_gets_store_in_use(kgkit, workspace, tmp_path):
    path = tmp_path / "t.nt"
    path.write_text(NT, encoding="utf-8")
    assert kgkit("import", str(path), "--quiet").exit_code == 0
    before = _store_quads(workspace)
    holder = textwrap.dedent(
        f"""
        import sys, time
        from kgkit.store import open_store
        with open_store({str(workspace.store_path)!r}, write=True):
            print("holding", flush=True)
            sys.stdin.readline()
        """
    )
    proc = subprocess.Popen(
        [sys.executable, "-c", holder],
        stdin=subprocess.PIPE,
        stdout=subprocess.PIPE,
        text=True,
    )
    try:
        assert proc.stdout.readline().strip() == "holding"
        r = kgkit("import", str(path), "--graph", "other")
        assert r.exit_code == 1
        lines = r.output.strip().splitlines()
        assert len(lines) == 1
        assert lines[0].startswith("Error: ") and "store is in use" in lines[0]
        r = kgkit("graphs")
        assert r.exit_code == 1 and "store is in use" in r.output
    finally:
        proc.communicate("\n", timeout=30)
    assert proc.returncode == 0
    assert _store_quads(workspace) == before


def test_import_w3c_files_through_the_cli(kgkit):
    """A few W3C suite files through the command (the rest go through the library)."""
    # RDF 1.1 Turtle / N-Triples suites, w3c/rdf-tests ad541a5f (../shared/reference/w3c)
    turtle = W3C / "turtle"
    if not (turtle / "index.tsv").is_file():
        pytest.skip(f"W3C suites not found at {W3C}")
    base = "https://w3c.github.io/rdf-tests/rdf/rdf11/rdf-turtle/"
    r = kgkit(
        "import",
        str(turtle / "turtle-subm-01.ttl"),
        "--base",
        base + "turtle-subm-01.ttl",
        "--json",
    )
    assert r.exit_code == 0, r.output
    expected = len(set(ox.parse(path=str(turtle / "turtle-subm-01.nt"))))
    assert _last_json(r.output)["loaded"] == expected
    r = kgkit("import", str(W3C / "ntriples" / "nt-syntax-bad-uri-01.nt"))
    assert r.exit_code == 1
    # line 1 is a comment; the bad IRI starts the statement on line 2
    bad = W3C / "ntriples" / "nt-syntax-bad-uri-01.nt"
    assert r.output.startswith(f"Error: {bad}:2:1: invalid IRI code point ' '")


def test_import_jobs_accepts_every_option_and_prints_the_same_summary(kgkit, monkeypatch, tmp_path):
    from kgkit.ingest import lines

    monkeypatch.setattr(lines, "CHUNK_BYTES", 300)  # several chunks from the small dump
    common = [
        "--on-error",
        "skip",
        "--scope",
        "profile",
        "--literal-languages",
        "en,de",
        "--json",
    ]
    common += ["--batch-size", "5", "--quiet", "--format", "nt"]
    out = {}
    for jobs in ("1", "2"):
        rejects = str(tmp_path / f"{jobs}.rejects.txt")
        r = kgkit(
            "import",
            str(MESSY),
            "--graph",
            f"g{jobs}",
            "--jobs",
            jobs,
            *common,
            "--rejects",
            rejects,
        )
        assert r.exit_code == 0, r.output
        d = _last_json(r.output)
        out[jobs] = {
            k: v for k, v in d.items() if k not in ("seconds", "graph", "content", "rejects")
        }
    assert out["1"] == out["2"]
    assert out["2"]["filtered"] == 4 and out["2"]["rejected"] == 5
    one, two = ((tmp_path / f"{j}.rejects.txt").read_text(encoding="utf-8") for j in "12")
    assert one == two


def test_file_name_that_is_not_utf8_imports_and_shows_escaped(kgkit, tmp_path):
    # issue 15 item 9: such a name crashed the provenance record; a name is a name
    name = tmp_path / os.fsdecode(b"dump-\xff\xe2\x80\xa8.nt")
    name.write_text(NT, encoding="utf-8")
    r = kgkit("import", str(name), "--graph", "odd", "-q")
    assert r.exit_code == 0, r.output
    assert r.output.splitlines()[0].startswith("graph odd created from dump-\\xff\\u2028.nt in ")
    bad = tmp_path / os.fsdecode(b"bad-\xfe.nt")
    bad.write_bytes(b"<bad> .\n")
    r = kgkit("import", str(bad), "--graph", "odd")
    assert r.exit_code == 1
    assert r.output.count("\n") == 1 and "bad-\\xfe.nt:1:1: " in r.output
    r = kgkit("slice", str(bad), "-o", str(tmp_path / "out.nt"))
    assert r.exit_code == 1 and "bad-\\xfe.nt:1:1: " in r.output

"""Sifting lines a slice cannot keep without parsing them (kgkit.ingest.sift).

The property that makes it safe: every chunk the sift vouches for parses, so a line it sets
aside unparsed is never a bad line that parsing would have set aside. Checked against the
W3C N-Triples 1.1 and N-Quads 1.1 syntax suites (../shared/reference/w3c) and against lines
made by mutating valid ones; and a slice with sifting gives exactly what parsing every line
gives, rejects included.
"""

from __future__ import annotations

import csv
import random
from pathlib import Path

import pyoxigraph as ox
import pytest
from conftest import W3C, w3c_suite

import kgkit.ingest.lines as lines_mod
from kgkit.ingest.lines import ChunkSpec, process_chunk
from kgkit.ingest.sift import sift_chunk
from kgkit.ingest.slicing import Slice

FORMATS = {"ntriples": ("nt", ox.RdfFormat.N_TRIPLES), "nquads": ("nq", ox.RdfFormat.N_QUADS)}
DATA = Path(__file__).parent / "data"


def _suite_rows(suite: str) -> list[tuple[str, str, str]]:
    path = W3C / suite / "index.tsv"
    if not path.is_file():
        return []
    with open(path, encoding="utf-8", newline="") as fh:
        return [
            (suite, r["test_name"], r["type"], r["action_file"])
            for r in csv.DictReader(fh, delimiter="\t")
        ]


def _all_predicates(data: bytes, fmt) -> frozenset[str]:
    try:
        return frozenset(q.predicate.value for q in ox.parse(input=data, format=fmt))
    except SyntaxError:
        return frozenset({"http://example/p", "http://example/p2"})


def _parses(data: bytes, fmt) -> int | None:
    try:
        return sum(1 for _ in ox.parse(input=data, format=fmt))
    except SyntaxError:
        return None


NEGATIVE = [r for s in FORMATS for r in _suite_rows(s) if r[2] == "NegativeSyntax"]
POSITIVE = [r for s in FORMATS for r in _suite_rows(s) if r[2] == "PositiveSyntax"]


@pytest.mark.parametrize("row", NEGATIVE, ids=[r[1] for r in NEGATIVE])
def test_w3c_bad_file_is_never_vouched_for(row):
    # W3C RDF 1.1 N-Triples / N-Quads test suites, negative syntax tests: each file holds a
    # statement a conforming parser refuses; the sift must hand such a chunk to the parser.
    suite, _name, _kind, action = row
    data = (w3c_suite(suite) / action).read_bytes()
    short, fmt = FORMATS[suite]
    assert _parses(data, fmt) is None  # the suite's own claim, through pyoxigraph
    for preds in (frozenset({"http://example/p"}), frozenset({"http://example/unrelated"})):
        assert sift_chunk(data, short, preds) is None


@pytest.mark.parametrize("row", POSITIVE, ids=[r[1] for r in POSITIVE])
def test_w3c_good_file_sifts_to_what_parsing_gives(row):
    # W3C N-Triples / N-Quads positive syntax tests: when the sift vouches for the file,
    # the statements it keeps plus those it skips are the file's statements.
    suite, _name, _kind, action = row
    data = (w3c_suite(suite) / action).read_bytes()
    short, fmt = FORMATS[suite]
    total = _parses(data, fmt)
    assert total is not None
    preds = _all_predicates(data, fmt)
    for keep in (preds, frozenset(sorted(preds)[:1]), frozenset()):
        s = sift_chunk(data, short, keep)
        if s is None:
            continue
        kept = [q for q in ox.parse(input=s.kept, format=fmt)]
        assert all(q.predicate.value in keep for q in kept)
        want = sum(1 for q in ox.parse(input=data, format=fmt) if q.predicate.value in keep)
        assert (len(kept), s.skipped) == (want, total - want)


def test_common_lines_are_vouched_for():
    # the point of the sift: ordinary dump lines are in its subset
    data = (
        b"<http://a.example/e/1> <http://www.w3.org/2004/02/skos/core#prefLabel> "
        b'"caf\xc3\xa9 \\"au lait\\""@fr-CA .\n'
        b"<http://a.example/e/1> <http://a.example/p/height> "
        b'"1.5"^^<http://www.w3.org/2001/XMLSchema#decimal> .\r\n'
        b"_:b0 <http://a.example/p/x?q=1&r=%20> <urn:isbn:0451450523> . # note\n"
        b"<http://a.example:8080/e/2> <http://www.w3.org/2004/02/skos/core#prefLabel> "
        b'"zwei"@de-1996 .'
    )
    s = sift_chunk(data, "nt", frozenset({"http://www.w3.org/2004/02/skos/core#prefLabel"}))
    assert s is not None
    assert s.skipped == 2
    assert s.kept.count(b"\n") == 1 and s.kept.endswith(b'"zwei"@de-1996 .')
    # an empty or comment-only line: the chunk is parsed whole (counted lines are statements)
    assert sift_chunk(b"# head\n" + data, "nt", frozenset()) is None
    assert sift_chunk(b"\n" + data, "nt", frozenset()) is None


# characters that make or break N-Triples terms
_ALPHABET = list(b"<>\"\\ \t:/#%@^_.-?&='{}|`~x0A\r") + [0xC3, 0xA9, 0xFF, 0x00, 0x7F]


def _mutate(rng: random.Random, line: bytes) -> bytes:
    b = bytearray(line)
    for _ in range(rng.randint(1, 3)):
        op = rng.random()
        at = rng.randrange(len(b) + 1)
        if op < 0.4 and b:
            b[min(at, len(b) - 1)] = rng.choice(_ALPHABET)
        elif op < 0.7:
            b.insert(at, rng.choice(_ALPHABET))
        elif b:
            del b[min(at, len(b) - 1)]
    return bytes(b).replace(b"\n", b"")


def _seed_lines() -> list[bytes]:
    # our own crafted lines (invented) plus the W3C positive N-Triples files when present
    out = [
        b'<http://a.example/e/1> <http://a.example/p> "text"@en .',
        b'<http://a.example/e/1> <http://a.example/p> "a\\tb\\u00e9"@en-GB .',
        b"<http://a.example/e/1> <http://a.example/p> <http://b.example:80/x/y?z#f> .",
        b'_:b1 <http://a.example/p> "12"^^<http://www.w3.org/2001/XMLSchema#integer> .',
        b"<urn:x:y> <http://a.example/p> _:b2 . # c",
        b'<http://a.example/%41> <http://a.example/p> "\\"q\\""@zh-Hant-TW .',
    ]
    for row in POSITIVE:
        if row[0] == "ntriples":
            data = (W3C / "ntriples" / row[3]).read_bytes()
            out.extend(x for x in data.split(b"\n") if x.strip() and not x.startswith(b"#"))
    return out


def test_mutated_lines_vouched_for_always_parse():
    # generated inputs, seeded: whatever the sift vouches for, pyoxigraph (strict) parses,
    # with the same number of statements
    rng = random.Random(20261202)
    seeds = _seed_lines()
    vouched = 0
    for i in range(20_000):
        line = _mutate(rng, rng.choice(seeds))
        s = sift_chunk(line + b"\n", "nt", frozenset({"http://a.example/p"}))
        if s is None:
            continue
        vouched += 1
        n = _parses(line + b"\n", ox.RdfFormat.N_TRIPLES)
        assert n is not None, f"vouched for a line the parser refuses (case {i}): {line!r}"
        assert n == 1 == s.skipped + (1 if s.kept else 0)
    assert vouched > 1000  # the mutations also produce good lines, or this proves nothing


def _slice_both_ways(monkeypatch, data: bytes, fmt: str, sl: Slice):
    spec = ChunkSpec(fmt, sl, raw_ok=False, blank_scope="f1.")
    with_sift = process_chunk(spec, 1, data)
    monkeypatch.setattr(lines_mod, "sift_chunk", lambda *a: None)
    without = process_chunk(spec, 1, data)
    monkeypatch.undo()
    return with_sift, without


@pytest.mark.parametrize("case", ["demo-core", "messy"])
def test_slice_with_sifting_equals_parsing_every_line(monkeypatch, case):
    data = {
        "demo-core": (Path(lines_mod.__file__).parent.parent / "demo" / "core.nt"),
        "messy": DATA / "ingest-messy" / "messy.nt",
    }[case].read_bytes()
    preds = frozenset(
        {
            "http://www.w3.org/2004/02/skos/core#prefLabel",
            "http://www.w3.org/2004/02/skos/core#broader",
            "http://www.w3.org/2000/01/rdf-schema#label",
        }
    )
    for sl in (Slice(predicates=preds), Slice(predicates=preds, literal_languages=("en",))):
        a, b = _slice_both_ways(monkeypatch, data, "nt", sl)
        assert (a.text, a.read, a.filtered, a.rejects, a.kept) == (
            b.text,
            b.read,
            b.filtered,
            b.rejects,
            b.kept,
        )


def test_sifting_skips_in_a_clean_chunk(monkeypatch):
    lines = [
        f'<http://a.example/e/{i}> <http://a.example/p/{i % 7}> "v {i}"@en .\n'.encode()
        for i in range(700)
    ]
    data = b"".join(lines)
    sl = Slice(predicates=frozenset({"http://a.example/p/3"}))
    s = sift_chunk(data, "nt", sl.predicates)
    assert s is not None and s.skipped == 600
    a, b = _slice_both_ways(monkeypatch, data, "nt", sl)
    assert (a.text, a.read, a.filtered, a.kept) == (b.text, b.read, b.filtered, b.kept)
    assert a.read == 700 and a.kept == 100


# characters around those the writer escapes (controls, DEL, U+FFFE, U+FFFF) and others
_TEXT_POOL = ["a", " ", "é", "中", "\U0001f600", "\ufffe", "\uffff", "\ufffd", "\x7f", "\x1f",
              "\u2028", "\u0085", "'", "<", ">", "#", "@", "^"]  # fmt: skip


def test_lines_copied_as_they_are_are_what_the_writer_writes():
    # a line keep_canonical copies must be byte for byte what parsing it and writing the
    # triple back gives (pyoxigraph's N-Triples writer): seeded generated lines
    from kgkit.ingest.sift import keep_canonical

    rng = random.Random(7)
    seeds = _seed_lines()
    copied = 0
    for _ in range(20_000):
        if rng.random() < 0.5:
            line = _mutate(rng, rng.choice(seeds))
        else:
            text = "".join(rng.choice(_TEXT_POOL) for _ in range(rng.randint(0, 6)))
            tag = rng.choice(["", "@en", "@EN", "@de-ch", "@zh-hant-tw", "@x"])
            dt = rng.choice(["", "", "^^<http://www.w3.org/2001/XMLSchema#string>",
                             "^^<http://www.w3.org/2001/XMLSchema#integer>"])  # fmt: skip
            obj = f'"{text}"{tag or dt}'
            line = f"<http://a.example/s> <http://a.example/p> {obj} .".encode()
        data = line + b"\n"
        # as in a slice: only lines of a chunk the sift vouched for (valid UTF-8, the subset)
        if sift_chunk(data, "nt", frozenset()) is None:
            continue
        got = keep_canonical(data, Slice())
        if got is None:
            continue
        copied += 1
        q = next(ox.parse(input=data, format=ox.RdfFormat.N_TRIPLES))
        assert got[0] == f"{q.subject} {q.predicate} {q.object} .\n".encode(), line
    assert copied > 2000


def test_copied_lines_pass_the_language_and_subject_tests_as_parsed_ones(monkeypatch):
    lines = []
    for i in range(300):
        lang = ("en", "de", "fr", "en-gb")[i % 4]
        lines.append(f'<http://a.example/e/{i % 50}> <http://a.example/l> "n {i}"@{lang} .\n')
        lines.append(
            f"<http://a.example/e/{i % 50}> <http://a.example/up> <http://a.example/e/{i // 7}> .\n"
        )  # noqa: E501
        lines.append(f'<http://a.example/e/{i}> <http://a.example/other> "{i}" .\n')
    data = "".join(lines).encode()
    preds = frozenset({"http://a.example/l", "http://a.example/up"})
    subjects = frozenset(f"http://a.example/e/{i}" for i in range(0, 50, 3))
    kept = []
    for sl in (
        Slice(predicates=preds),
        Slice(predicates=preds, literal_languages=("en",)),
        Slice(predicates=preds, literal_languages=("de", "fr"), subjects=subjects),
    ):
        a, b = _slice_both_ways(monkeypatch, data, "nt", sl)
        assert (a.text, a.read, a.filtered, a.kept) == (b.text, b.read, b.filtered, b.kept)
        assert a.read == 900
        kept.append(a.kept)
    # counted apart from kgkit: 300 labels (en, de, fr, en-gb in turn), 300 parent links
    in_subjects = [i for i in range(300) if (i % 50) % 3 == 0]
    third = len(in_subjects) + sum(1 for i in in_subjects if i % 4 in (1, 2))
    assert kept == [600, 300 + 150, third]


def test_a_last_line_without_its_end_is_written_with_it(monkeypatch):
    data = (
        b'<http://a.example/e/1> <http://a.example/l> "one"@en .\n'
        b'<http://a.example/e/2> <http://a.example/other> "x" .\n'
        b'<http://a.example/e/2> <http://a.example/l> "two"@en .'
    )
    for extra in (b"", b'<http://a.example/e/3> <http://a.example/l> "q\\"uote"@en .\n'):
        sl = Slice(predicates=frozenset({"http://a.example/l"}))
        a, b = _slice_both_ways(monkeypatch, extra + data, "nt", sl)
        assert a.text == b.text and a.text.endswith(b'"two"@en .\n')
        assert (a.read, a.filtered, a.kept) == (b.read, b.filtered, b.kept)

"""Fuzzing the importer (and the slicer): generated bad inputs of every format and compression.

Seeded (``KGKIT_FUZZ_SEED`` picks another seed) and bounded: a few hundred small inputs,
each imported in both error modes into one store. For every input: no exception but a
:class:`KgkitError` (the command line shows those as one line; anything else would be a
traceback), every message one line, no import longer than a few seconds (an alarm turns
a hang into a failure), the store exactly as before after every refusal, and after a
success the counts reconcile and the graph holds what was counted.
"""

from __future__ import annotations

import bz2
import gzip
import lzma
import os
import random
import signal
import time
import unicodedata

import pyoxigraph as ox
import pytest
import zstandard

from kgkit.errors import KgkitError
from kgkit.ingest import ImportOptions, import_into_store, make_slice
from kgkit.ingest.slice_dump import slice_dump
from kgkit.store import current_graphs, open_store

SEED = int(os.environ.get("KGKIT_FUZZ_SEED", "20261202"))
CASES = 240  # inputs; each is imported twice (stop and skip)
PER_IMPORT_SECONDS = 20  # a hang is a failure, not a stuck suite

E = "http://example.org/"
SAMPLES = {
    "nt": (
        f'<{E}a> <{E}label> "canoe polo"@en .\n'
        f'<{E}a> <{E}label> "Kanupolo"@de .\n'
        f"<{E}a> <{E}parent> <{E}b> .\n"
        f'<{E}a> <{E}size> "5"^^<http://www.w3.org/2001/XMLSchema#integer> .\n'
        f'_:x <{E}label> "blank \\u00e9 \\"quoted\\""@fr .\n'
        f"<{E}a> <{E}says> <<( <{E}b> <{E}p> _:x )>> .\n"
        "# a comment\n"
        f"<{E}b> <{E}parent> <{E}c> .\n"
    ),
    "nq": (
        f'<{E}a> <{E}label> "canoe polo"@en <{E}g1> .\n'
        f"<{E}a> <{E}parent> <{E}b> .\n"
        f'_:x <{E}label> "blank"@fr <{E}g2> .\n'
        f"<{E}b> <{E}parent> <{E}c> <{E}g1> .\n"
    ),
    "ttl": (
        f"@prefix ex: <{E}> .\n"
        "ex:a ex:label \"canoe polo\"@en, 'Kanupolo'@de ;\n"
        "  ex:parent ex:b ;\n"
        '  ex:note """two\nlines""" ;\n'
        "  ex:list ( ex:b ex:c ) ;\n"
        '  ex:nested [ ex:label "inner" ] .\n'
        "ex:b ex:says << ex:a ex:p ex:c >> .\n"
    ),
    "jsonld": (
        '{"@context": {"ex": "' + E + '"},\n'
        ' "@graph": [{"@id": "ex:a", "ex:label": {"@value": "canoe polo", "@language": "en"},\n'
        '             "ex:parent": {"@id": "ex:b"}},\n'
        '            {"@id": "ex:b", "ex:size": 5}]}\n'
    ),
    "records": (
        '{"id": "<' + E + 'a>", "names": {"en": "canoe polo", "de": "Kanupolo"}}\n'
        '{"id": "<' + E + 'b>", "parents": ["<' + E + 'a>"], "code": "B-1"}\n'
        '{"id": "<' + E + 'c>", "facts": [{"p": "<' + E + 'size>", "value": "5"}]}\n'
    ),
}
EXT = {"nt": ".nt", "nq": ".nq", "ttl": ".ttl", "jsonld": ".jsonld", "records": ".jsonl"}
COMPRESS = {
    "none": ("", lambda b: b),
    "gzip": (".gz", lambda b: gzip.compress(b, mtime=0)),
    "bzip2": (".bz2", bz2.compress),
    "xz": (".xz", lzma.compress),
    "zstd": (".zst", lambda b: zstandard.ZstdCompressor(write_checksum=True).compress(b)),
}
# bytes that have broken parsers and messages: line ends of every kind, NUL, C1 and
# Unicode separators, invalid UTF-8, BOM, quotes, brackets, escapes, surrogates
NASTY = [
    b"\r",
    b"\n",
    b"\r\n",
    b"\x00",
    b"\x0b",
    b"\x0c",
    b"\xc2\x85",
    "\u2028".encode(),
    b"\xff",
    b"\xc3",
    b"\xef\xbb\xbf",
    b'"',
    b"<",
    b">",
    b"\\",
    b"_:",
    b"@",
    b"^^",
    b"{",
    b"}",
    b"[",
    b"]",
    b"<<(",
    b")>>",
    b"\\ud800",
    b'"\\udfff"',
    b"9" * 5000,
    b"[" * 3000,
    b"<<( " * 200,
    b"\t",
    b" . ",
]


def _mutate_text(rng: random.Random, data: bytes) -> bytes:
    kind = rng.randrange(9)
    at = rng.randrange(len(data) + 1)
    if kind == 0:  # cut anywhere
        return data[:at]
    if kind == 1:  # flip bytes
        b = bytearray(data)
        for _ in range(rng.randint(1, 4)):
            if b:
                b[rng.randrange(len(b))] ^= rng.randrange(1, 256)
        return bytes(b)
    if kind == 2:  # insert nasty bytes
        for _ in range(rng.randint(1, 3)):
            at = rng.randrange(len(data) + 1)
            data = data[:at] + rng.choice(NASTY) + data[at:]
        return data
    if kind == 3:  # line ends: CR only, or mixed
        return data.replace(b"\n", rng.choice([b"\r", b"\r\n", b"\n\r"]))
    if kind == 4:  # byte-order mark in front, sometimes twice
        return b"\xef\xbb\xbf" * rng.randint(1, 2) + data
    if kind == 5:  # random binary
        return rng.randbytes(rng.randint(0, 4096))
    if kind == 6:  # empty or blank
        return rng.choice([b"", b"\n", b"   \n\n", b"\xef\xbb\xbf"])
    if kind == 7:  # a line repeated with a nasty byte (many bad lines)
        lines = data.split(b"\n")
        line = rng.choice(lines) if lines else b""
        return data + (line + rng.choice(NASTY) + b"\n") * rng.randint(2, 50)
    return data[at:]  # the start cut off


def _mutate_compressed(rng: random.Random, data: bytes, name: str) -> bytes:
    if name == "none" or rng.random() < 0.4:
        return data
    kind = rng.randrange(5)
    if kind == 0:
        return data[: rng.randrange(len(data))]  # cut short
    if kind == 1:
        b = bytearray(data)
        b[rng.randrange(len(b))] ^= rng.randrange(1, 256)
        return bytes(b)
    if kind == 2:
        return data + rng.choice([b"x", b"\x00" * 3, rng.randbytes(50), b"\x1f\x8b"])
    if kind == 3:
        return data[:4]  # the magic number and little else
    return data + data  # two streams: valid


def _cases(rng: random.Random):
    formats = list(SAMPLES)
    for i in range(CASES):
        fmt = formats[i % len(formats)]
        comp = rng.choice(list(COMPRESS))
        text = SAMPLES[fmt].encode()
        if rng.random() < 0.9:
            text = _mutate_text(rng, text)
        suffix, compress = COMPRESS[comp]
        yield i, fmt, comp, EXT[fmt] + suffix, _mutate_compressed(rng, compress(text), comp)


def _shows_as_one_line(message: str) -> bool:
    """No control, separator or invisible format character left unescaped (Unicode
    general categories; spaces of any width are fine)."""
    hidden = {"Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"}
    return bool(message) and not any(unicodedata.category(c) in hidden for c in message)


def _slice_case(workspace, path, output, where: str) -> None:
    """``kgkit slice`` reads the same inputs: one-line errors, no output on a refusal."""
    for mode in ("stop", "skip"):
        signal.alarm(PER_IMPORT_SECONDS)
        try:
            slice_dump(workspace, [str(path)], output, make_slice(workspace), on_error=mode)
        except KgkitError as exc:
            assert _shows_as_one_line(str(exc)), f"{where} slice {mode}: {exc!s}"
            assert not output.exists(), f"{where} slice {mode}: output left behind"
        except _Hang:
            pytest.fail(f"{where} slice {mode}: no answer in {PER_IMPORT_SECONDS} s")
        finally:
            signal.alarm(0)
        output.unlink(missing_ok=True)


def _snapshot(store: ox.Store) -> set[str]:
    return {str(q) for q in store}


class _Hang(Exception):
    pass


def _alarm(signum, frame):
    raise _Hang()


@pytest.mark.parametrize("seed", [SEED])
def test_generated_bad_inputs_never_traceback_hang_or_change_the_store(tmp_path, workspace, seed):
    rng = random.Random(seed)
    good = tmp_path / "good.nt"
    good.write_text(SAMPLES["nt"], encoding="utf-8")
    outcomes: dict[str, int] = {"refused": 0, "imported": 0}
    previous = signal.signal(signal.SIGALRM, _alarm)
    t0 = time.perf_counter()
    try:
        for i, fmt, comp, ext, data in _cases(rng):
            # a fresh in-memory store per input: the same import code, without the disk's
            # fixed cost per bulk load (about 60 ms) or a history growing with every case;
            # test_cli_import_of_bad_inputs_is_one_line_and_leaves_the_store goes to disk
            store = ox.Store()
            import_into_store(store, [str(good)], "g", ImportOptions(), workspace)
            path = tmp_path / f"case{i}{ext}"
            path.write_bytes(data)
            for mode in ("stop", "skip"):
                before = _snapshot(store)
                opts = ImportOptions(
                    on_error=mode,
                    rejects=tmp_path / f"case{i}.rejects.txt",
                    batch_size=rng.choice([1, 3, 1000]),
                )
                where = f"seed {seed} case {i} ({fmt}, {comp}, {mode}): {path}"
                signal.alarm(PER_IMPORT_SECONDS)
                try:
                    s = import_into_store(store, [str(path)], "g", opts, workspace)
                except KgkitError as exc:
                    signal.alarm(0)
                    message = str(exc)
                    assert _shows_as_one_line(message), f"{where}: {message!r}"
                    assert _snapshot(store) == before, f"{where}: store changed"
                    outcomes["refused"] += 1
                    continue
                except _Hang:
                    pytest.fail(f"{where}: no answer in {PER_IMPORT_SECONDS} s")
                finally:
                    signal.alarm(0)
                outcomes["imported"] += 1
                assert s.read == s.loaded + s.duplicates + s.filtered + s.rejected, where
                content = ox.NamedNode(current_graphs(store)["g"])
                assert sum(1 for _ in store.quads_for_pattern(None, None, None, content)) == (
                    s.loaded
                ), where
                if mode == "stop":
                    assert s.rejected == 0, where
            if fmt in ("nt", "nq", "records"):
                _slice_case(workspace, path, tmp_path / f"case{i}.out.nt", f"case {i} ({comp})")
    finally:
        signal.signal(signal.SIGALRM, previous)
    # the generator must produce both outcomes, or it tests nothing
    assert outcomes["refused"] > CASES // 4 and outcomes["imported"] > CASES // 4, outcomes
    assert time.perf_counter() - t0 < 120


def test_cli_import_of_bad_inputs_is_one_line_and_leaves_the_store(kgkit, workspace, tmp_path):
    """A sample of the same inputs through ``kgkit import`` on the disk store."""
    rng = random.Random(SEED + 1)
    good = tmp_path / "good.nt"
    good.write_text(SAMPLES["nt"], encoding="utf-8")
    assert kgkit("import", str(good), "--graph", "g", "-q").exit_code == 0
    with open_store(workspace.store_path) as store:
        before = _snapshot(store)
    refused = 0
    for i, fmt, comp, ext, data in _cases(rng):
        if i >= 25:
            break
        path = tmp_path / f"cli{i}{ext}"
        path.write_bytes(data)
        # every third case in two worker processes: their errors come back through a pool
        jobs = "2" if i % 3 == 0 else "1"
        r = kgkit("import", str(path), "--graph", "g", "-q", "--jobs", jobs)
        where = f"case {i} ({fmt}, {comp}): {path}"
        # click's runner keeps an exception that escaped; SystemExit is a normal exit
        assert r.exception is None or isinstance(r.exception, SystemExit), (where, r.exception)
        if r.exit_code == 0:
            with open_store(workspace.store_path) as store:
                before = _snapshot(store)
            continue
        refused += 1
        assert r.exit_code == 1, (where, r.output)
        lines = r.output.splitlines()
        assert len(lines) == 1 and lines[0].startswith("Error: "), (where, r.output)
        assert _shows_as_one_line(lines[0]), (where, r.output)
        with open_store(workspace.store_path) as store:
            assert _snapshot(store) == before, where
    assert refused >= 5

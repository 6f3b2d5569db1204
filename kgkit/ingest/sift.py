"""Sifting: setting aside, without parsing them, the lines of a chunk a slice cannot keep.

A slice that keeps a few predicates throws most of a real dump away, and turning each of
those statements into Python objects only to drop it costs several times more than
reading the file. :func:`sift_chunk` decides, on the chunk's bytes alone, which lines can
matter and hands back only those, for the parser.

What a line skipped unparsed is checked against, so that a malformed line is never silently
dropped: the whole chunk must be valid UTF-8 and every line must belong to a strict subset
of N-Triples (or N-Quads), matched by one regular expression over the whole chunk
(RE2, linear time):

- every line a statement: subject, predicate, object (and graph) separated by spaces or
  tabs, a final ``.``, an optional comment; ``\\n`` or ``\\r\\n`` line ends (a chunk with an
  empty or comment-only line is parsed whole);
- IRIs absolute, in ASCII, with the generic syntax of RFC 3986 (scheme, an authority of
  registered-name characters and an optional numeric port, path, query, fragment;
  ``%`` only before two hex digits; no user information, no IP literals, no escapes);
- blank node labels of ASCII letters, digits, ``_``, ``-`` and inner ``.``;
- literals without raw control characters, with the escapes ``\\t \\b \\n \\r \\f \\" \\'
  \\\\`` and ``\\uXXXX`` outside the surrogate range, and an optional language tag of the
  common BCP 47 shapes (language, script, region, variants) or datatype IRI.

Every line of this subset is accepted by the parser (tests check it against the W3C
N-Triples and N-Quads suites and against generated lines); a chunk holding any line
outside it (an escape in an IRI, a rare language tag, a bad line) is not sifted and goes
through the parser whole, which then sets its bad lines aside as before. So the statements
kept, their order and the rejected lines are exactly those of parsing everything.

Which lines can matter: those whose second term is one of the kept predicates, found by
searching the chunk for the predicates' IRIs (Aho-Corasick) and checking that the match
stands in the predicate's place on its line.

Those lines are parsed, unless they are all already written the way the parser would write
them back (:func:`keep_canonical`: one space between terms, no comment, no escape, a
lower-case language tag, no blank node, ...): then the slice's remaining tests (language of
a literal, subject) are read off the bytes and the kept lines are copied as they are, which
gives the same bytes as parsing and writing them.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import ahocorasick_rs
import pyoxigraph as ox
import re2

__all__ = ["Sifted", "keep_canonical", "line_pattern", "sift_chunk"]

# -- the strict subset, as one regular expression ------------------------------------

_HEX = "[0-9A-Fa-f]"
_PCT = f"%{_HEX}{_HEX}"
# RFC 3986: unreserved / sub-delims (and ':' '@' where allowed); '%' only as an escape
_REGNAME = f"(?:[A-Za-z0-9._~!$&'()*+,;=-]|{_PCT})"
_PCHAR = f"(?:[A-Za-z0-9._~!$&'()*+,;=:@-]|{_PCT})"
_QCHAR = f"(?:[A-Za-z0-9._~!$&'()*+,;=:@/?-]|{_PCT})"
_PATH_AFTER_AUTHORITY = f"(?:/(?:{_PCHAR}|/)*)?"
_PATH_ABSOLUTE = f"/(?:{_PCHAR}(?:{_PCHAR}|/)*)?"
_PATH_ROOTLESS = f"{_PCHAR}(?:{_PCHAR}|/)*"
_IRI = (
    "<[A-Za-z][A-Za-z0-9+.-]*:"
    f"(?://{_REGNAME}*(?::[0-9]*)?{_PATH_AFTER_AUTHORITY}|{_PATH_ABSOLUTE}|{_PATH_ROOTLESS})?"
    f"(?:\\?{_QCHAR}*)?(?:#{_QCHAR}*)?>"
)
_BNODE = "_:[A-Za-z0-9_](?:[A-Za-z0-9_.-]*[A-Za-z0-9_-])?"
# \uXXXX outside D800-DFFF (a lone surrogate is no character)
_UCHAR = f"\\\\u(?:[0-9A-Ca-cEeFf]{_HEX}{{3}}|[Dd][0-7]{_HEX}{{2}})"
_LITCHAR = '[^"\\\\\\x00-\\x1f\\x7f]'
_LANG = (
    "@[a-zA-Z]{2,3}(?:-[a-zA-Z]{4})?(?:-(?:[a-zA-Z]{2}|[0-9]{3}))?"
    "(?:-(?:[a-zA-Z0-9]{5,8}|[0-9][a-zA-Z0-9]{3}))*"
)
_LITERAL = f'"(?:{_LITCHAR}|\\\\[tbnrf"\'\\\\]|{_UCHAR})*"(?:{_LANG}|\\^\\^{_IRI})?'
_WS = "[ \\t]"
_END = f"{_WS}*\\.{_WS}*(?:#[^\\r\\n]*)?\\r?"


def line_pattern(quads: bool) -> str:
    """The regular expression (RE2 syntax) of one line of the subset, without its ``\\n``."""
    subject = f"(?:{_IRI}|{_BNODE})"
    obj = f"(?:{_IRI}|{_BNODE}|{_LITERAL})"
    graph = f"(?:{_WS}+(?:{_IRI}|{_BNODE}))?" if quads else ""
    return f"(?:{_WS}*{subject}{_WS}+{_IRI}{_WS}+{obj}{graph}{_END})"


def _lines_regex(line: str):
    """RE2 matching whole chunks of lines of the pattern ``line`` (the last line may lack
    its ``\\n``), on bytes."""
    options = re2.Options()
    options.encoding = re2.Options.Encoding.LATIN1  # bytes; UTF-8 is checked apart
    options.max_mem = 256 << 20  # room for the DFA of a long pattern
    return re2.compile(f"(?:{line}\\n)*(?:{line})?".encode("latin-1"), options)


@lru_cache(maxsize=2)
def _chunk_regex(quads: bool):
    return _lines_regex(line_pattern(quads))


@lru_cache(maxsize=8)
def _predicate_finder(predicates: frozenset[str]):
    pats = sorted(f"<{p}>".encode() for p in predicates if p.isascii())
    return ahocorasick_rs.BytesAhoCorasick(pats) if pats else None


# -- lines already written as the parser writes them back -----------------------------

_CANON_LANG = (
    "@[a-z]{2,3}(?:-[a-z]{4})?(?:-(?:[a-z]{2}|[0-9]{3}))?(?:-(?:[a-z0-9]{5,8}|[0-9][a-z0-9]{3}))*"
)
# no escapes at all, and none of the characters the writer escapes (controls, DEL; U+FFFE
# and U+FFFF are refused apart, below)
_CANON_LITERAL = f'"[^"\\\\\\x00-\\x1f\\x7f]*"(?:{_CANON_LANG}|\\^\\^{_IRI})?'
_CANON_LINE = f"{_IRI} {_IRI} (?:{_IRI}|{_CANON_LITERAL}) \\."
_WRITER_ESCAPES = (b"\xef\xbf\xbe", b"\xef\xbf\xbf", b"^^<http://www.w3.org/2001/XMLSchema#string>")


@lru_cache(maxsize=1)
def _canonical_regex():
    return _lines_regex(_CANON_LINE)


def keep_canonical(kept: bytes, slice) -> tuple[bytes, int, int] | None:
    """The lines of ``kept`` (the lines of a chunk :func:`sift_chunk` vouched for) that
    ``slice`` keeps, as N-Triples: ``(text, number kept, number filtered)``.

    A line without a backslash must be written exactly as pyoxigraph writes a triple back:
    it is then copied, its language and subject tests read off its bytes. Lines with an
    escape are parsed (a few per chunk in a real dump: escaped quotes in descriptions).
    None when the lines cannot be handled this way (a line written otherwise, a blank node
    among the parsed ones): the caller then parses them all.

    >>> sl = __import__("kgkit.ingest.slicing", fromlist=["Slice"]).Slice(
    ...     literal_languages=("en",))
    >>> keep_canonical(b'<http://a.example/x> <http://a.example/l> "x"@en .\\n'
    ...                b'<http://a.example/x> <http://a.example/l> "x"@de .\\n'
    ...                b'<http://a.example/x> <http://a.example/l> "\\\\u0079"@EN .\\n', sl)
    (b'<http://a.example/x> <http://a.example/l> "x"@en .\\n<http://a.example/x> <http://a.example/l> "y"@en .\\n', 2, 1)
    >>> keep_canonical(b'<http://a.example/x>  <http://a.example/l> "x" .\\n', sl) is None
    True
    """  # noqa: E501
    lines = kept.splitlines(keepends=True)
    escaped = [i for i, line in enumerate(lines) if b"\\" in line] if b"\\" in kept else []
    if lines and not lines[-1].endswith(b"\n"):  # the file's last line: written with its end
        lines[-1] += b"\n"
        kept += b"\n"
    skip = set(escaped)
    plain = b"".join(x for i, x in enumerate(lines) if i not in skip) if escaped else kept
    if any(x in plain for x in _WRITER_ESCAPES) or not _canonical_regex().fullmatch(plain):
        return None
    parsed: dict[int, bytes | None] = {}
    if escaped:
        odd = b"".join(lines[i] for i in escaped)
        if b"_:" in odd:
            return None
        for i, q in zip(escaped, ox.parse(input=odd, format=ox.RdfFormat.N_TRIPLES), strict=True):
            keep = slice.keeps(q)
            parsed[i] = f"{q.subject} {q.predicate} {q.object} .\n".encode() if keep else None
    langs, subjects = slice.literal_languages, slice.subjects
    if not parsed and langs is None and subjects is None:
        return kept, len(lines), 0
    out = []
    for i, line in enumerate(lines):
        if i in parsed:
            if parsed[i] is not None:
                out.append(parsed[i])
            continue
        if subjects is not None and line[1 : line.index(b">")].decode() not in subjects:
            continue
        if langs is not None:
            at = line.rfind(b'"@')  # a literal of these lines holds no '"': its tag
            if at > 0 and not slice.keeps_language(line[at + 2 : line.rindex(b" ")].decode()):
                continue
        out.append(line)
    return b"".join(out), len(out), len(lines) - len(out)


def _is_subset_chunk(data: bytes, quads: bool) -> bool:
    try:
        data.decode("utf-8")
    except UnicodeDecodeError:
        return False
    return _chunk_regex(quads).fullmatch(data) is not None


# -- sifting -------------------------------------------------------------------------


@dataclass(frozen=True)
class Sifted:
    """The lines of a chunk that can matter, and how many statements were set aside.

    ``kept``: the lines (bytes, each with its line end) whose predicate is a kept one,
    in their order; ``skipped``: statements of the chunk not among them.
    """

    kept: bytes
    skipped: int


def sift_chunk(data: bytes, fmt: str, predicates: frozenset[str]) -> Sifted | None:
    """Lines of ``data`` whose predicate is in ``predicates``, or None when the chunk
    cannot be vouched for (then it must be parsed whole).

    ``fmt``: ``"nt"`` or ``"nq"``.

    >>> d = (b'<http://a.example/x> <http://a.example/label> "x"@en .\\n'
    ...      b'<http://a.example/x> <http://a.example/height> "2" .\\n')
    >>> s = sift_chunk(d, "nt", frozenset({"http://a.example/label"}))
    >>> s.kept, s.skipped
    (b'<http://a.example/x> <http://a.example/label> "x"@en .\\n', 1)
    >>> sift_chunk(b"<x> <y> <z> .\\n", "nt", frozenset({"y"})) is None  # relative IRIs
    True
    """
    if fmt not in ("nt", "nq") or not _is_subset_chunk(data, fmt == "nq"):
        return None
    finder = _predicate_finder(predicates)
    pieces: list[bytes] = []
    if finder is not None:
        rfind, find, last = data.rfind, data.find, -1
        for _pat, at, _end in finder.find_matches_as_indexes(data):
            start = rfind(b"\n", 0, at) + 1
            if start == last:
                continue
            head = data[start:at]
            # in the predicate's place: one term (terms of the subset hold no white space),
            # then white space
            if head[-1:] in (b" ", b"\t") and len(head.split()) == 1:
                end = find(b"\n", at)
                pieces.append(data[start : len(data) if end < 0 else end + 1])
                last = start
    # every line of a vouched-for chunk is one statement
    lines = data.count(b"\n") + (0 if data.endswith(b"\n") or not data else 1)
    return Sifted(b"".join(pieces), lines - len(pieces))

"""Input formats: names, file extensions, and telling one from a file name."""

from __future__ import annotations

from pathlib import Path

import pyoxigraph as ox

from kgkit.errors import ArgumentError, InputError, one_line
from kgkit.ingest.sources import COMPRESSION_SUFFIXES

__all__ = ["FORMATS", "LINE_BASED", "RDF_FORMATS", "detect_format"]

#: format name -> file extensions that imply it
FORMATS = {
    "nt": (".nt", ".ntriples"),
    "nq": (".nq", ".nquads"),
    "ttl": (".ttl", ".turtle"),
    "jsonld": (".jsonld", ".json"),
    "records": (".jsonl", ".ndjson"),
}
LINE_BASED = frozenset({"nt", "nq", "records"})
RDF_FORMATS = {
    "nt": ox.RdfFormat.N_TRIPLES,
    "nq": ox.RdfFormat.N_QUADS,
    "ttl": ox.RdfFormat.TURTLE,
    "jsonld": ox.RdfFormat.JSON_LD,
}


def detect_format(label: str, explicit: str | None = None) -> str:
    """The format of an input: ``explicit`` if given, else from the extension.

    Compression extensions are looked through: ``dump.nt.gz`` is N-Triples.

    >>> detect_format("dump.nt.gz")
    'nt'
    >>> detect_format("people.jsonl")
    'records'
    """
    if explicit:
        if explicit not in FORMATS:
            raise ArgumentError(
                "format", f"unknown format {one_line(repr(explicit))} (known: {', '.join(FORMATS)})"
            )
        return explicit
    if label == "-":
        raise InputError(
            "-: cannot tell the format of standard input; give format=NAME", params=("format",)
        )
    suffixes = [s.lower() for s in Path(label).suffixes]
    while suffixes and suffixes[-1] in COMPRESSION_SUFFIXES:
        suffixes.pop()
    if suffixes:
        for name, exts in FORMATS.items():
            if suffixes[-1] in exts:
                return name
    raise InputError(
        f"{one_line(label)}: cannot tell the format from the file name; "
        f"give format=NAME ({', '.join(FORMATS)})",
        params=("format",),
    )

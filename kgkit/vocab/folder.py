"""Reading and writing a vocabulary folder (``vocab/NAME/build`` or a release).

A folder holds the files of one :class:`~kgkit.vocab.model.Vocabulary`:
``topics.jsonl`` (one :class:`~kgkit.vocab.model.TopicRecord` a line, sorted by
id), ``topics.yaml`` (the scheme and the topics, for people), ``skos.ttl``,
``lexicon.tsv`` (one :class:`~kgkit.vocab.model.LexiconRow` a line after its
header) and ``report.json`` (the :class:`~kgkit.vocab.model.Report`). This module
is the one reader of each of them; the texts come from :mod:`kgkit.vocab.writers`.

Parsing is separate from opening: :func:`parse_topics` and :func:`parse_lexicon`
take lines, :func:`read_topics` and :func:`read_lexicon` open a file and hand
its lines over.
"""

from __future__ import annotations

import json
import os
from collections.abc import Callable, Iterable
from pathlib import Path

from kgkit.errors import BuildFileError
from kgkit.inputs import load_yaml, read_json, shape_error
from kgkit.vocab.model import LexiconRow, Report, Scheme, TopicRecord, Vocabulary

__all__ = [
    "FILE_OF_OUTPUT",
    "LEXICON_HEADER",
    "LEXICON_SOURCE",
    "REPORT_FILE",
    "BuildFileError",
    "parse_lexicon",
    "parse_topics",
    "read_lexicon",
    "read_report",
    "read_scheme",
    "read_topics",
    "read_vocabulary",
    "vocabulary_files",
    "write_vocabulary",
]

#: spec ``outputs`` name -> file name
FILE_OF_OUTPUT = {
    "jsonl": "topics.jsonl",
    "yaml": "topics.yaml",
    "skos": "skos.ttl",
    "lexicon": "lexicon.tsv",
}
REPORT_FILE = "report.json"
LEXICON_HEADER = ("alias", "match_key", "topic", "language", "kind", "shared_by")
#: the column a lexicon has when it holds inflected forms: the name each was made from
LEXICON_SOURCE = "source"


def parse_topics(lines: Iterable[str], name: str = "topics.jsonl") -> dict[str, TopicRecord]:
    """Topic records by id, in line order, from the lines of a ``topics.jsonl`` file.

    >>> parse_topics(['{"id": "a", "labels": {"en": "A"}}'])["a"].label()
    'A'
    >>> parse_topics(['{"id": "a"}', '{"id": "a"}'], "t.jsonl")
    Traceback (most recent call last):
    kgkit.errors.BuildFileError: t.jsonl:2: topic id 'a' appears twice
    """
    out: dict[str, TopicRecord] = {}
    loads, make = json.loads, TopicRecord.from_json
    for n, line in enumerate(lines, 1):
        if not line.strip():
            continue
        try:
            t = loads(line)
        except json.JSONDecodeError as exc:
            raise BuildFileError(f"{name}:{n}: not a JSON object ({exc.msg})") from None
        except (ValueError, RecursionError):  # over 4,300 digits; nested too deep
            raise BuildFileError(
                f"{name}:{n}: not a topic (a number too long or nesting too deep)"
            ) from None
        if not isinstance(t, dict) or not isinstance(t.get("id"), str):
            raise BuildFileError(f"{name}:{n}: a topic needs a string 'id'")
        if t["id"] in out:
            raise BuildFileError(f"{name}:{n}: topic id {t['id']!r} appears twice")
        if not _topic_fits(t):
            problem = shape_error(t, TOPIC_SHAPE) or "a topic of the wrong shape"
            raise BuildFileError(f"{name}:{n}: topic {t['id']!r}: {problem}")
        out[t["id"]] = make(t)
    return out


_NONE = type(None)
_TEXT_OR_NONE = (str, _NONE)
_TEXTS = ("curie", "graph", "iri", "notation", "replaced_by", "source")
_LISTS = ("flags", "parents", "same_as")
#: the types of a topic's fields in ``topics.jsonl`` (see :func:`kgkit.inputs.shape_error`)
TOPIC_SHAPE = {
    "id": str,
    **{k: (str, _NONE) for k in _TEXTS},
    **{k: ([str], _NONE) for k in _LISTS},
    "labels": ({str: str}, _NONE),
    "aliases": ({str: [str]}, _NONE),
    "depth": (int, _NONE),
    "origin": (str, _NONE),
    "status": (str, _NONE),
}


def _topic_fits(t: dict) -> bool:
    """A fast yes for a well-formed topic (the common case, in plain loops: a third of
    the time of generator expressions); :data:`TOPIC_SHAPE` says what is wrong otherwise."""
    g = t.get
    for k in _TEXTS:
        if type(g(k)) not in _TEXT_OR_NONE:
            return False
    for k in _LISTS:
        v = g(k)
        if v is not None:
            if type(v) is not list:
                return False
            for x in v:
                if type(x) is not str:
                    return False
    v = g("labels")
    if v is not None:
        if type(v) is not dict:
            return False
        for x in v.values():
            if type(x) is not str:
                return False
    v = g("aliases")
    if v is not None:
        if type(v) is not dict:
            return False
        for xs in v.values():
            if type(xs) is not list:
                return False
            for x in xs:
                if type(x) is not str:
                    return False
    d = g("depth")
    return (
        (d is None or type(d) is int)
        and type(g("origin")) in _TEXT_OR_NONE
        and type(g("status")) in _TEXT_OR_NONE
    )


def read_topics(path: Path | str, missing_ok: bool = False) -> dict[str, TopicRecord]:
    """The topics of a ``topics.jsonl`` file by id, in file order.

    A missing file gives ``{}`` with ``missing_ok``; otherwise, like a malformed
    line, it raises :class:`BuildFileError` naming the file (and line).
    """
    path = Path(path)
    try:
        fh = path.open(encoding="utf-8")
    except FileNotFoundError:
        if missing_ok:
            return {}
        raise BuildFileError(f"{path}: no such topic file") from None
    with fh:
        try:
            return parse_topics(fh, str(path))
        except UnicodeDecodeError:
            raise BuildFileError(f"{path}: not UTF-8 text") from None


def parse_lexicon(lines: Iterable[str], name: str = "lexicon.tsv") -> list[LexiconRow]:
    """Lexicon rows from the lines of a ``lexicon.tsv`` file (header first).

    >>> (row,) = parse_lexicon(["alias\\tmatch_key\\ttopic\\tlanguage\\tkind\\tshared_by\\n",
    ...                         "Kayak polo\\tkayak polo\\tcanoe-polo\\ten\\talias\\t1\\n"])
    >>> row.match_key, row.topic, row.shared_by
    ('kayak polo', 'canoe-polo', 1)
    """
    it = iter(lines)
    header = next(it, None)
    head = tuple(header.rstrip("\r\n").split("\t")) if header is not None else None
    if head not in (LEXICON_HEADER, (*LEXICON_HEADER, LEXICON_SOURCE)):
        raise BuildFileError(
            f"{name}:1: expected the tab-separated header {', '.join(LEXICON_HEADER)}"
            f" (and {LEXICON_SOURCE!r} when it holds inflected forms)"
        )
    rows = []
    width = len(head)
    for n, line in enumerate(it, 2):
        line = line.rstrip("\r\n")
        if not line:
            continue
        cells = line.split("\t")
        if len(cells) != width:
            raise BuildFileError(f"{name}:{n}: expected {width} columns")
        alias, key, tid, lang, kind, shared, *source = cells
        if not key:
            raise BuildFileError(f"{name}:{n}: empty match key")
        try:
            count = int(shared)
        except ValueError:
            raise BuildFileError(f"{name}:{n}: shared_by {shared!r} is not a number") from None
        rows.append(LexiconRow(alias, key, tid, lang, kind, count, *source))
    return rows


def read_lexicon(path: Path | str) -> list[LexiconRow]:
    """The rows of a ``lexicon.tsv`` file (see :func:`parse_lexicon`)."""
    path = Path(path)
    try:
        fh = open(path, encoding="utf-8", newline="")  # noqa: SIM115 - closed below
    except FileNotFoundError:
        raise BuildFileError(f"{path}: no such lexicon file") from None
    with fh:
        try:
            return parse_lexicon(fh, str(path))
        except UnicodeDecodeError:
            raise BuildFileError(f"{path}: not UTF-8 text") from None


def read_report(folder: Path | str) -> Report | None:
    """The ``report.json`` of a folder, or None when it has none."""
    path = Path(folder) / REPORT_FILE
    if not os.path.lexists(path):
        return None
    obj = read_json(path, "a compile report", BuildFileError)
    if not isinstance(obj, dict):
        raise BuildFileError(f"{path}:1: a report is a JSON object")
    problem = shape_error(obj, REPORT_SHAPE)
    if problem:
        raise BuildFileError(f"{path}: {problem}")
    return Report.from_json(obj)


_RECORDS = ([dict], _NONE)
#: the types of the parts of ``report.json`` that readers look into
REPORT_SHAPE = {
    "ambiguous": _RECORDS,
    "carried_names": _RECORDS,
    "counts": ({str: (int, float, {str: (int, float)})}, _NONE),
    "curation": ({"applied": _RECORDS, "stale": _RECORDS, "carried": _RECORDS}, _NONE),
    "cycles": _RECORDS,
    "dropped_aliases": _RECORDS,
    "dropped_topics": _RECORDS,
    "graphs": _RECORDS,
    "id_clashes": (list, _NONE),
    "lost_names": _RECORDS,
    "new_roots": ([str], _NONE),
    "reattached": (list, _NONE),
    "reductions": ([list], _NONE),
    "release_deprecations": _RECORDS,
    "spec": (dict, _NONE),
}


def read_scheme(folder: Path | str, report: Report | None = None) -> Scheme:
    """The scheme of a folder: the ``scheme:`` block at the head of ``topics.yaml``
    (read up to ``topics:``), else the report's ``spec``, else the folder's name."""
    folder = Path(folder)
    values: dict[str, str] = {}
    path = folder / FILE_OF_OUTPUT["yaml"]
    if path.is_file():
        head = []
        with open(path, encoding="utf-8") as fh:
            for line in fh:
                if line.startswith("topics:"):
                    break
                head.append(line)
        data = load_yaml("".join(head), str(path), BuildFileError).data or {}
        if not isinstance(data, dict):
            raise BuildFileError(f"{path}: malformed scheme block (not a mapping)")
        values = {k: v for k, v in (data.get("scheme") or {}).items() if isinstance(v, str)}
    spec = (report.spec if report else None) or {}
    name = values.get("name") or spec.get("name") or folder.parent.name
    return Scheme(
        iri=values.get("iri") or spec.get("scheme") or "",
        name=name,
        namespace=values.get("namespace") or spec.get("namespace") or "",
        title=values.get("title") or name,
    )


def read_vocabulary(folder: Path | str, languages: Iterable[str] = ()) -> Vocabulary:
    """The vocabulary of a build or release folder.

    Needs ``topics.jsonl``; ``lexicon.tsv`` and ``report.json`` are read when present.
    ``languages``: the display order of label languages (a folder does not record
    the spec's). Lent-label tags are not read back (they live only in ``skos.ttl``).
    """
    folder = Path(folder)
    topics = read_topics(folder / FILE_OF_OUTPUT["jsonl"])
    lex_path = folder / FILE_OF_OUTPUT["lexicon"]
    lexicon = read_lexicon(lex_path) if lex_path.is_file() else []
    report = read_report(folder)
    return Vocabulary(
        read_scheme(folder, report),
        tuple(topics[i] for i in sorted(topics)),
        tuple(lexicon),
        report if report is not None else Report(),
        {},
        tuple(languages),
    )


def vocabulary_files(
    vocab: Vocabulary, outputs: Iterable[str], report_files: bool = True
) -> dict[str, Callable[[], str]]:
    """File name -> function making its text, for the ``outputs`` asked for (names
    of :data:`FILE_OF_OUTPUT`) and, with ``report_files``, ``report.json`` and
    ``report.txt``. Each text is made only when its function is called."""
    from kgkit.vocab import writers

    outputs = set(outputs)
    out: dict[str, Callable[[], str]] = {}
    if report_files:
        out[REPORT_FILE] = lambda: writers.report_json_text(vocab.report.to_json())
        out["report.txt"] = lambda: writers.report_text(
            vocab.scheme.name,
            vocab.report.to_json(),
            lambda tid: vocab.display_label(tid) if tid in vocab else None,
        )
    if "jsonl" in outputs:
        out[FILE_OF_OUTPUT["jsonl"]] = lambda: writers.jsonl_text(vocab.topics)
    if "yaml" in outputs:
        out[FILE_OF_OUTPUT["yaml"]] = lambda: writers.yaml_text(
            vocab.scheme.to_json(), writers.reading_order(vocab.topics, vocab.languages)
        )  # for people: by hierarchy, then label (topics.jsonl stays sorted by id)
    if "skos" in outputs:
        out[FILE_OF_OUTPUT["skos"]] = lambda: writers.skos_text(
            vocab.scheme.iri, vocab.scheme.title, vocab.topics, vocab.label_tags
        )
    if "lexicon" in outputs:
        out[FILE_OF_OUTPUT["lexicon"]] = lambda: writers.lexicon_text(vocab.lexicon)
    return out


def write_vocabulary(vocab: Vocabulary, folder: Path | str, outputs: Iterable[str]) -> Path:
    """Write the vocabulary's files into ``folder`` (a build folder), replacing it
    atomically: a temporary folder renamed into place. Returns the folder."""
    from kgkit.vocab.writers import write_build

    return write_build(Path(folder), vocabulary_files(vocab, outputs))

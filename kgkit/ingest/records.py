"""Entity-record JSON Lines: our own line-per-entity import format.

One JSON object per line describes one entity. Field names are ours; the profile
of the workspace says which predicate each field becomes (the first predicate
listed for its role). Every field but ``id`` is optional::

    {"id": "ex:canoe-polo",
     "names": {"en": "canoe polo", "de": "Kanupolo"},
     "other_names": {"en": ["kayak polo"]},
     "hidden_names": {"en": ["canoepolo"]},
     "summary": {"en": "team sport played in canoes"},
     "parents": ["ex:paddle-sports"],
     "kinds": ["ex:Sport"],
     "same_as": ["ex:kayak-polo"],
     "code": "WS-12",
     "facts": [{"p": "ex:playedAt", "o": "ex:lakeport"},
               {"p": "ex:season", "text": "summer", "lang": "en"},
               {"p": "ex:players", "value": "5", "type": "xsd:integer"}]}

Text fields map a language tag to a string or a list of strings; the key ``""``
means no language tag. Identifiers are CURIEs over the workspace prefixes, IRIs in
``<...>``, or bare absolute IRIs.
"""

from __future__ import annotations

import json

import pyoxigraph as ox

from kgkit.errors import RecordError, WorkspaceError
from kgkit.workspace import Workspace

__all__ = ["RECORD_FIELDS", "RecordError", "record_to_triples", "parse_record_line"]

#: field -> (profile role, kind of value)
RECORD_FIELDS = {
    "names": ("label", "text"),
    "other_names": ("alias", "text"),
    "hidden_names": ("hidden_label", "text"),
    "summary": ("description", "text"),
    "parents": ("parent", "ids"),
    "kinds": ("type", "ids"),
    "same_as": ("same_as", "ids"),
    "code": ("notation", "plain"),
}
_KNOWN = {"id", "facts", *RECORD_FIELDS}


class _Terms:
    """Cached term construction for one workspace (terms repeat across records)."""

    def __init__(self, ws: Workspace):
        self.ws = ws
        self._iris: dict[str, ox.NamedNode] = {}
        self.role_predicate: dict[str, ox.NamedNode | None] = {
            role: (ox.NamedNode(ws.profile[role][0]) if ws.profile[role] else None)
            for role, _ in RECORD_FIELDS.values()
        }

    def iri(self, value: object, field: str) -> ox.NamedNode:
        if not isinstance(value, str):
            raise RecordError(f"field {field!r} must hold identifiers (strings)")
        node = self._iris.get(value)
        if node is None:
            try:
                iri = self.ws.expand(value, where=f"field {field!r}")
                node = ox.NamedNode(iri)
            except (WorkspaceError, ValueError) as exc:
                raise RecordError(
                    str(exc).split(": ", 1)[-1] if ":" in str(exc) else str(exc)
                ) from None
            if len(self._iris) < 200_000:
                self._iris[value] = node
        return node


def _texts(value: object, field: str):
    if not isinstance(value, dict):
        raise RecordError(f"field {field!r} must map language tags to text")
    for lang, texts in value.items():
        if isinstance(texts, str):
            texts = [texts]
        if not isinstance(texts, list) or not all(isinstance(t, str) for t in texts):
            raise RecordError(f"field {field!r}.{lang!r} must be a string or a list of strings")
        for t in texts:
            yield lang, t


def _literal(text: str, lang: object, field: str) -> ox.Literal:
    if not isinstance(lang, str):
        raise RecordError(f"field {field!r} must be a language tag (a string)")
    try:
        return ox.Literal(text, language=lang) if lang else ox.Literal(text)
    except ValueError:
        raise RecordError(f"field {field!r}: {lang!r} is not a valid language tag") from None


def record_to_triples(record: object, terms: _Terms) -> list[ox.Triple]:
    """Map one decoded record to RDF triples through the workspace profile."""
    if not isinstance(record, dict):
        raise RecordError("a record must be a JSON object")
    unknown = sorted(set(record) - _KNOWN)
    if unknown:
        raise RecordError(f"unknown field {unknown[0]!r} (known: {', '.join(sorted(_KNOWN))})")
    if "id" not in record:
        raise RecordError("record has no 'id'")
    subject = terms.iri(record["id"], "id")
    out: list[ox.Triple] = []
    for field, (role, kind) in RECORD_FIELDS.items():
        if field not in record:
            continue
        value = record[field]
        pred = terms.role_predicate[role]
        if pred is None:
            raise RecordError(f"field {field!r} needs a predicate for role {role!r} in the profile")
        if kind == "text":
            for lang, text in _texts(value, field):
                out.append(ox.Triple(subject, pred, _literal(text, lang, field)))
        elif kind == "ids":
            if isinstance(value, str):
                value = [value]
            if not isinstance(value, list):
                raise RecordError(f"field {field!r} must be a list of identifiers")
            for v in value:
                out.append(ox.Triple(subject, pred, terms.iri(v, field)))
        else:
            if isinstance(value, str):
                value = [value]
            if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
                raise RecordError(f"field {field!r} must be a string or a list of strings")
            for v in value:
                out.append(ox.Triple(subject, pred, ox.Literal(v)))
    facts = record.get("facts", [])
    if not isinstance(facts, list):
        raise RecordError("field 'facts' must be a list of objects")
    for i, fact in enumerate(facts):
        where = f"facts[{i}]"
        if not isinstance(fact, dict) or "p" not in fact:
            raise RecordError(f"{where} must be an object with 'p'")
        extra = set(fact) - {"p", "o", "text", "lang", "value", "type"}
        if extra:
            raise RecordError(f"{where}: unknown key {sorted(extra)[0]!r}")
        pred = terms.iri(fact["p"], f"{where}.p")
        given = [k for k in ("o", "text", "value") if k in fact]
        if len(given) != 1:
            raise RecordError(f"{where} needs exactly one of 'o', 'text' or 'value'")
        if "o" in fact:
            obj: ox.NamedNode | ox.Literal = terms.iri(fact["o"], f"{where}.o")
        elif "text" in fact:
            if not isinstance(fact["text"], str):
                raise RecordError(f"{where}.text must be a string")
            obj = _literal(fact["text"], fact.get("lang", ""), f"{where}.lang")
        else:
            if not isinstance(fact["value"], str):
                raise RecordError(f"{where}.value must be a string")
            dtype = terms.iri(fact["type"], f"{where}.type") if "type" in fact else None
            try:
                obj = (
                    ox.Literal(fact["value"], datatype=dtype)
                    if dtype
                    else ox.Literal(fact["value"])
                )
            except ValueError as exc:
                raise RecordError(f"{where}: {exc}") from None
        out.append(ox.Triple(subject, pred, obj))
    return out


def _lone_surrogate(record: object) -> str | None:
    """The first text of ``record`` (keys included) holding a lone surrogate, escaped."""
    todo = [record]
    while todo:
        value = todo.pop()
        if isinstance(value, dict):
            todo.extend(value)
            todo.extend(value.values())
        elif isinstance(value, list):
            todo.extend(value)
        elif isinstance(value, str):
            try:
                value.encode("utf-8")
            except UnicodeEncodeError as exc:
                return f"\\u{ord(value[exc.start]):04x}"
    return None


def parse_record_line(line: bytes, terms: _Terms) -> list[ox.Triple]:
    """Decode one line of entity-record JSON Lines into triples.

    Any problem of the line raises :class:`RecordError` with its cause, so that the
    import can set the record aside whatever went wrong with it.
    """
    try:
        # without its line ending, so that an error at the end has this line's column
        record = json.loads(line.rstrip(b"\r\n"))
    except json.JSONDecodeError as exc:
        raise RecordError(f"malformed JSON: {exc.msg}", exc.colno) from None
    except UnicodeDecodeError:
        raise RecordError("not UTF-8 text") from None
    except RecursionError:
        raise RecordError("malformed record: nested too deeply") from None
    except ValueError as exc:  # an integer of over 4,300 digits, for one
        cause = "a number of over 4,300 digits" if "digits" in str(exc) else str(exc)
        raise RecordError(f"malformed JSON: {cause}") from None
    # a JSON escape such as \ud800 decodes to half a character, which no RDF term holds
    if (b"\\ud" in line or b"\\uD" in line) and (bad := _lone_surrogate(record)):
        raise RecordError(f"text holds a lone surrogate ({bad}), which is not a character")
    try:
        return record_to_triples(record, terms)
    except RecordError:
        raise
    except (ValueError, TypeError, RecursionError) as exc:
        # a value no check above foresaw: the record is set aside, not the import
        raise RecordError(f"cannot be mapped ({exc.__class__.__name__}: {exc})") from None

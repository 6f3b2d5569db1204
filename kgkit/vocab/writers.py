"""Writing a compiled vocabulary: topics (JSON Lines, YAML), SKOS Turtle, lexicon, report.

Every writer returns the file's text; :func:`write_build` writes them all into a
temporary folder and renames it into place, so a failure leaves the previous
build untouched. Output is deterministic: sorted, no timestamps.
"""

from __future__ import annotations

import json
import os
import re
import shutil
from collections.abc import Callable, Iterable, Mapping
from json.encoder import encode_basestring as _js
from pathlib import Path

from kgkit.vocab.folder import LEXICON_HEADER, LEXICON_SOURCE, BuildFileError, read_topics
from kgkit.vocab.model import TopicRecord
from kgkit.wording import counted

__all__ = [
    "BuildFileError",
    "read_topics",
    "reading_order",
    "LEXICON_HEADER",
    "jsonl_text",
    "lexicon_text",
    "report_json_text",
    "report_text",
    "skos_text",
    "write_build",
    "yaml_text",
]


# one encoder for every record: json.dumps with options builds a new one per call
_encode = json.JSONEncoder(ensure_ascii=False, sort_keys=True).encode


def jsonl_text(records: Iterable[TopicRecord]) -> str:
    """One topic per line, keys sorted, UTF-8 without ASCII escapes."""
    enc = _encode
    fields = TopicRecord._fields
    return "".join([enc(dict(zip(fields, r, strict=True))) + "\n" for r in records])


# characters PyYAML refuses inside a document, even quoted (YAML 1.1 printable set)
# (and the line breaks NEL, LS, PS, which a quoted scalar would fold)
_NON_PRINTABLE = re.compile(
    "[^\x09\x0a\x0d\x20-\x7e\xa0-\u2027\u202a-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]"
)


def _flow(value) -> str:
    """A YAML flow value. JSON's double-quoted strings are YAML's too (same escapes)."""
    kind = type(value)
    if kind is str:
        return _js(value)
    if kind is list or kind is tuple:
        if all(type(v) is str for v in value):
            return "[" + ", ".join(map(_js, value)) + "]"
        return "[" + ", ".join(_flow(v) for v in value) + "]"
    if kind is dict:
        items = []
        for k in sorted(value):
            v = value[k]
            items.append(_js(str(k)) + ": " + (_js(v) if type(v) is str else _flow(v)))
        return "{" + ", ".join(items) + "}"
    if value is None:
        return "null"
    if kind is bool:
        return "true" if value else "false"
    if kind is int:
        return str(value)
    return _js(str(value))


def reading_order(
    records: Iterable[TopicRecord], languages: Iterable[str] = ()
) -> list[TopicRecord]:
    """Topics in the order a person reads them: each root, then its subtree depth
    first, siblings by label (in the first of ``languages`` that has one); a topic
    with several parents under the first one reached; deprecated topics last, by label.

    >>> ts = [TopicRecord.make("b", labels={"en": "boats"}, parents=("s",)),
    ...       TopicRecord.make("a", labels={"en": "archery"}, parents=("s",)),
    ...       TopicRecord.make("s", labels={"en": "sport"}),
    ...       TopicRecord.make("k", labels={"en": "kayaks"}, parents=("b",)),
    ...       TopicRecord.make("old", labels={"en": "aardvark"}).deprecate(None)]
    >>> [t.id for t in reading_order(ts)]
    ['s', 'a', 'b', 'k', 'old']
    """
    records = list(records)
    languages = tuple(languages)

    def key(t: TopicRecord):
        label = t.label(languages) or ""
        return (label.casefold(), label, t.id)

    active = {t.id: t for t in records if t.is_active}
    children: dict[str, list[TopicRecord]] = {}
    roots = []
    for t in active.values():
        known = [p for p in t.parents if p in active]
        if not known:
            roots.append(t)
        for p in known:
            children.setdefault(p, []).append(t)
    out: list[TopicRecord] = []
    seen: set[str] = set()
    stack = sorted(roots, key=key, reverse=True)
    while stack:
        t = stack.pop()
        if t.id in seen:
            continue
        seen.add(t.id)
        out.append(t)
        stack.extend(sorted(children.get(t.id, ()), key=key, reverse=True))
    out.extend(sorted((t for t in active.values() if t.id not in seen), key=key))
    out.extend(sorted((t for t in records if not t.is_active), key=key))
    return out


def yaml_text(scheme: dict, records: Iterable[TopicRecord]) -> str:
    """The topic file for review: the scheme, then every topic, one key per line."""
    lines = ["# Compiled by kgkit; edit the spec or the curation file, not this file.", "scheme:"]
    lines.extend(f"  {k}: {_flow(scheme[k])}" for k in sorted(scheme))
    records = list(records)
    lines.append("topics:" if records else "topics: []")
    # every record has the same keys: sort them and make the line heads once, and write
    # the common values (strings, null, numbers, lists of strings) without a call to _flow
    js, flow = _js, _flow
    keys = sorted(TopicRecord._fields)
    heads = [f"  - {keys[0]}: "] + [f"\n    {k}: " for k in keys[1:]]
    order = [TopicRecord._fields.index(k) for k in keys]
    pairs = list(zip(heads, order, strict=True))
    for r in records:
        parts = []
        for head, k in pairs:
            v = r[k]
            kind = type(v)
            if kind is str:
                parts.append(head + js(v))
            elif v is None:
                parts.append(head + "null")
            elif (kind is tuple or kind is list) and not v:
                parts.append(head + "[]")
            elif kind is dict and not v:
                parts.append(head + "{}")
            else:
                parts.append(head + flow(v))
        lines.append("".join(parts))
    text = "\n".join(lines) + "\n"
    # only strings can hold such characters, and they are all double-quoted here
    return _NON_PRINTABLE.sub(lambda m: f"\\u{ord(m.group()):04x}", text)


_TURTLE_SPECIAL = re.compile(r'[\\"\x00-\x1f\x7f]')


def _tq(text: str) -> str:
    """A Turtle string literal (W3C RDF 1.1 Turtle, ECHAR and UCHAR escapes)."""
    if not _TURTLE_SPECIAL.search(text):
        return '"' + text + '"'
    out = (
        text.replace("\\", "\\\\")
        .replace('"', '\\"')
        .replace("\n", "\\n")
        .replace("\r", "\\r")
        .replace("\t", "\\t")
    )
    return '"' + re.sub(r"[\x00-\x1f\x7f]", lambda m: f"\\u{ord(m.group()):04X}", out) + '"'


def _tl(text: str, lang: str) -> str:
    return _tq(text) + (f"@{lang}" if lang else "")


def skos_text(
    scheme_iri: str,
    title: str,
    records: Iterable[TopicRecord],
    label_languages: Mapping[str, Mapping[str, str]],
) -> str:
    """SKOS in Turtle (W3C SKOS Reference, 2009): one concept scheme, one concept per topic.

    ``label_languages``: topic -> {language of ``labels`` -> language tag to write},
    for preferred labels lent by a fallback language (written with their own tag).
    """
    records = list(records)
    iri_of = {r.id: r.iri for r in records}
    children: dict[str, list[str]] = {}
    for r in records:
        for p in r.parents:
            children.setdefault(p, []).append(r.id)
    tops = [r.iri for r in records if r.is_active and not r.parents]
    out = [
        "@prefix dct: <http://purl.org/dc/terms/> .",
        "@prefix owl: <http://www.w3.org/2002/07/owl#> .",
        "@prefix skos: <http://www.w3.org/2004/02/skos/core#> .",
        "",
        f"<{scheme_iri}> a skos:ConceptScheme ;",
        f"    dct:title {_tq(title)}" + (" ;" if tops else " ."),
    ]
    if tops:
        out.append("    skos:hasTopConcept " + ",\n        ".join(f"<{t}>" for t in tops) + " .")
    in_scheme = f"skos:inScheme <{scheme_iri}>"
    top_of = f"skos:topConceptOf <{scheme_iri}>"
    special = _TURTLE_SPECIAL.search
    no_tags: dict[str, str] = {}

    def lit(text: str, lang: str) -> str:  # _tl, with its common case inline
        q = _tq(text) if special(text) else '"' + text + '"'
        return q + "@" + lang if lang else q

    for r in records:
        props = [in_scheme]
        tags = label_languages.get(r.id, no_tags)
        labels = r.labels
        seen = set()
        for lang in sorted(labels):
            pair = (labels[lang], tags.get(lang, lang))
            if pair not in seen:
                seen.add(pair)
                props.append("skos:prefLabel " + lit(*pair))
        aliases = r.aliases
        for lang in sorted(aliases):
            for a in aliases[lang]:
                if (a, lang) not in seen:
                    props.append("skos:altLabel " + lit(a, lang))
        if r.is_active:
            if not r.parents:
                props.append(top_of)
            for p in r.parents:
                props.append(f"skos:broader <{iri_of[p]}>")
            kids = children.get(r.id)
            if kids:
                for c in sorted(kids):
                    props.append(f"skos:narrower <{iri_of[c]}>")
        else:
            props.append("owl:deprecated true")
            if r.replaced_by and r.replaced_by in iri_of:
                props.append(f"dct:isReplacedBy <{iri_of[r.replaced_by]}>")
        if r.notation is not None:
            props.append("skos:notation " + _tq(r.notation))
        out.append(f"\n<{r.iri}> a skos:Concept ;\n    " + " ;\n    ".join(props) + " .")
    return "\n".join(out) + "\n"


def lexicon_text(rows: Iterable[tuple]) -> str:
    """TSV: header, then (alias, match key, topic, language, kind, shared_by) rows, and a
    ``source`` column when some row was made from another name (an inflected form)."""
    rows = rows if isinstance(rows, list | tuple) else list(rows)
    if any(len(r) > 6 and r[6] for r in rows):
        lines = ["\t".join((*LEXICON_HEADER, LEXICON_SOURCE))]
        lines.extend(["\t".join(map(str, r[:7])) for r in rows])
        return "\n".join(lines) + "\n"
    lines = ["\t".join(LEXICON_HEADER)]
    lines.extend([f"{a}\t{k}\t{t}\t{lg}\t{kind}\t{n}" for a, k, t, lg, kind, n, *_ in rows])
    return "\n".join(lines) + "\n"


def report_json_text(report: dict) -> str:
    return json.dumps(report, sort_keys=True, ensure_ascii=False, indent=2) + "\n"


def report_text(name: str, report: dict, label: Callable[[str], str | None] | None = None) -> str:
    """The short human summary of a compile. ``label``: topic id -> the label to show
    beside it (see :meth:`kgkit.vocab.model.Vocabulary.display_label`)."""
    from kgkit.wording import topic_text

    def shown(tid: str) -> str:
        return topic_text(label(tid), tid) if label is not None else tid

    c = report["counts"]
    lines = [
        f"vocabulary {name}: {counted(c['topics'], 'topic')} ({c['deprecated']} deprecated), "
        f"{counted(c['aliases'], 'alias', 'aliases')}, "
        f"{counted(c['lexicon_rows'], 'lexicon row')}",
        f"selected {c['selected']}, added by curation {c['added_by_curation']}, "
        f"dropped {counted(c['dropped_topics'], 'topic')} and "
        f"{counted(c['dropped_aliases'], 'alias', 'aliases')}",
    ]
    for kind, key in (
        ("topics", "dropped_topics_by_reason"),
        ("aliases", "dropped_aliases_by_reason"),
    ):
        for reason, n in sorted(c[key].items()):
            lines.append(f"  dropped {kind}, {reason}: {n}")
    lines.append(
        f"hierarchy: {counted(c['cycles_broken'], 'cycle link')} broken, "
        f"{counted(c['reductions'], 'redundant parent link')} removed, "
        f"{c['reattached']} reattached, {counted(c['new_roots'], 'new root')}, "
        f"{counted(c['roots'], 'root')}, depth up to {c['max_depth']}"
    )
    lines.append(f"ambiguous match keys: {c['ambiguous_keys']}; id clashes: {c['id_clashes']}")
    if c.get("inflected_forms"):
        lines.append(f"inflected forms in the lexicon: {c['inflected_forms']}")
    if "common_words" in c:
        lines.append(
            f"common words (names at or above the spec's Zipf frequency): {c['common_words']}"
        )
    from kgkit.vocab.curation import curation_summary, edit_text

    lines.append(curation_summary(c))
    cur = report["curation"]
    for o in cur.get("overridden") or []:
        lines.append(f"  {edit_text(o)} overridden by edit {o['overridden_by']}: {o['reason']}")
    for s in cur.get("carried") or []:
        lines.append(
            f"  {edit_text(s)} carried from {shown(s['carried']['from'])}"
            f" to {shown(s['carried']['to'])}"
        )
    for s in cur["stale"]:
        lines.append(f"  {edit_text(s)} is stale: {s['reason']}")
    return "\n".join(lines) + "\n"


def write_build(build_dir: Path, files: dict[str, str | Callable[[], str]]) -> Path:
    """Write ``files`` into ``build_dir`` atomically: temp folder, then rename.

    ``files`` maps a name to its text, or to a function making it (called just
    before the file is written, so that only one text is held at a time).
    """
    build_dir = Path(build_dir)
    build_dir.parent.mkdir(parents=True, exist_ok=True)
    tmp = build_dir.with_name(f".{build_dir.name}.tmp-{os.getpid()}")
    old = build_dir.with_name(f".{build_dir.name}.old-{os.getpid()}")
    for leftover in (tmp, old):
        if leftover.exists():
            shutil.rmtree(leftover)
    tmp.mkdir()
    try:
        for name in sorted(files):
            text = files[name]
            if callable(text):
                text = text()
            with open(tmp / name, "w", encoding="utf-8", newline="\n") as fh:
                fh.write(text)
            del text
        if build_dir.exists():
            os.replace(build_dir, old)
        os.replace(tmp, build_dir)
    except BaseException:
        if old.exists() and not build_dir.exists():
            os.replace(old, build_dir)
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    shutil.rmtree(old, ignore_errors=True)
    return build_dir

"""Release gates: what a vocabulary must pass before it is released.

A release is used unattended, so ``kgkit release`` refuses, before it writes
anything, a vocabulary that fails a gate; ``kgkit compile`` reports the same
problems as warnings (errors with ``strict``). The gates, by name:

==================== ==========================================================
``no-topics``        the vocabulary has no active topic
``no-label``         an active topic has no preferred label in any language
``missing-language`` an active topic has no preferred label in a language of
                     the spec's ``languages.required``
``lint-error``       ``kgkit lint`` finds a problem of level error in the SKOS
                     file the vocabulary makes
``unknown-entity``   a ``select`` root (any ``iri`` parameter of a template
                     run), an ``include`` or ``exclude`` entity, or a curation
                     edit's target that no graph mentions (and, for a
                     curation target, no topic has); the nearest names are
                     suggested the way ``kgkit find`` finds them
``topic-loss``       more of the previous release's active topics are gone
                     without an active replacement than the spec's
                     ``release.max_topic_loss`` allows (a share; default
                     :data:`DEFAULT_MAX_TOPIC_LOSS`): a dump cut short must
                     not become a release
==================== ==========================================================

Every problem is one line that names the topics by label and id. The owner can
release past a gate by waiving it with a reason; the manifest and the changelog
record which gates were waived and why (see :mod:`kgkit.release.release`).
"""

from __future__ import annotations

import difflib
import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path

from kgkit.errors import ArgumentError, GateError, KgkitError, one_line
from kgkit.vocab.aliases import lang_matches
from kgkit.wording import topic_text

__all__ = [
    "DEFAULT_MAX_TOPIC_LOSS",
    "GATES",
    "GateProblem",
    "check_labels",
    "check_lint",
    "check_references",
    "check_topic_loss",
    "check_waivers",
    "gate_error",
    "gate_problems",
    "lint_input",
    "topic_text",
    "vocabulary_gates",
    "waived_record",
]

#: gate name -> what it refuses
GATES: dict[str, str] = {
    "no-topics": "the vocabulary has no active topic",
    "no-label": "an active topic has no preferred label",
    "missing-language": "an active topic has no preferred label in a required language",
    "lint-error": "lint finds a problem of level error",
    "unknown-entity": "a select root, include/exclude entity or curation target no graph mentions",
    "topic-loss": "more of the previous release's topics lost than the spec allows",
}

#: The share of the previous release's active topics a release may lose (gone, or
#: deprecated without an active replacement) before the ``topic-loss`` gate refuses it.
#: Ten per cent: a refresh of a maintained graph loses far less (common practice, no
#: source), while a dump cut short, a wrong graph or a mistyped root loses far more.
DEFAULT_MAX_TOPIC_LOSS = 0.1

#: topics named in one problem line before "and N more"
SHOWN = 5


@dataclass(frozen=True)
class GateProblem:
    """One reason a vocabulary cannot be released: the gate and one line for a person."""

    gate: str
    message: str

    def __str__(self) -> str:
        return f"{self.message} [gate {self.gate}]"

    def to_json(self) -> dict:
        return {"gate": self.gate, "message": self.message}


def _shown(vocab, records) -> str:
    records = list(records)
    out = ", ".join(topic_text(vocab.display_label(t.id), t.id) for t in records[:SHOWN])
    if len(records) > SHOWN:
        out += f" and {len(records) - SHOWN} more"
    return out


def _topics(n: int) -> str:
    return f"{n} active topic{'' if n == 1 else 's'}"


def check_labels(vocab, required: Sequence[str] = ()) -> list[GateProblem]:
    """``no-topics``, ``no-label`` and ``missing-language`` (one line per language)."""
    active = vocab.active_topics()
    if not active:
        return [GateProblem("no-topics", "the vocabulary has no active topic")]
    out = []
    unlabelled = [t for t in active if not t.labels]
    if unlabelled:
        shown = [
            f"{t.id} ({t.curie or t.source or 'added by curation'})" for t in unlabelled[:SHOWN]
        ]
        more = f" and {len(unlabelled) - SHOWN} more" if len(unlabelled) > SHOWN else ""
        out.append(
            GateProblem(
                "no-label",
                f"{_topics(len(unlabelled))} without any preferred label "
                f"(is the entity still in the graph?): {', '.join(shown)}{more}",
            )
        )
    for lang in required:
        missing = [
            t for t in active if t.labels and not any(lang_matches(x, [lang]) for x in t.labels)
        ]
        if missing:
            out.append(
                GateProblem(
                    "missing-language",
                    f"{_topics(len(missing))} without a preferred label in {lang!r} "
                    f"(languages.required): {_shown(vocab, missing)}",
                )
            )
    return out


#: lint checks another gate reports already (in the vocabulary's own words)
_COVERED = {"no-preferred-label"}  # gate no-label


def lint_input(vocab) -> tuple[list[str], dict, list[tuple[str, str]]]:
    """What the SKOS file of ``vocab`` says that the error-level lint checks read, as
    plain data for :func:`kgkit.release.lint.lint_concepts`: the concepts' IRIs, their
    labels (IRI -> kind -> [(text, lower-case language)]) and the (narrower, broader)
    links. It follows :func:`kgkit.vocab.writers.skos_text` statement for statement
    (lent labels under their written tag, an alias equal to a preferred label not
    written, skos:broader from active topics, skos:narrower from active parents);
    ``tests/test_gate_lint.py`` checks that linting this and linting the text agree."""
    records = vocab.topics
    iri_of = {r.id: r.iri for r in records}
    active = {r.id for r in records if r.is_active}
    label_tags = vocab.label_tags
    labels_of: dict[str, dict] = {}
    up: list[tuple[str, str]] = []
    for r in records:
        labels, tags = r.labels, label_tags.get(r.id)
        if tags:  # lent labels: written under their tag
            preferred = [(text, tags.get(lang, lang).lower()) for lang, text in labels.items()]
            written = {(text, tags.get(lang, lang)) for lang, text in labels.items()}
        else:
            preferred = [(text, lang.lower()) for lang, text in labels.items()]
            written = {(text, lang) for lang, text in labels.items()} if r.aliases else ()
        alternative = [
            (a, lang.lower())
            for lang, aliases in r.aliases.items()
            for a in aliases
            if (a, lang) not in written  # an alias equal to a preferred label: not written
        ]
        kinds = labels_of.get(r.iri)
        if kinds is None:
            labels_of[r.iri] = {"preferred": preferred, "alternative": alternative, "hidden": []}
        else:  # two topics of one IRI are one concept in the file
            kinds["preferred"] += preferred
            kinds["alternative"] += alternative
        if r.parents:
            is_active = r.is_active
            for p in r.parents:
                if is_active:
                    up.append((r.iri, iri_of[p]))  # skos:broader
                if p in active:
                    up.append((r.iri, iri_of[p]))  # the parent's skos:narrower
    return list(iri_of.values()), labels_of, up


def check_lint(vocab) -> list[GateProblem]:
    """``lint-error``: one line per lint check of level error that fires on the SKOS
    the vocabulary makes, checked on the vocabulary itself (no text made or parsed)."""
    from kgkit.release.lint import lint_concepts

    concepts, labels_of, up = lint_input(vocab)
    report = lint_concepts(
        concepts,
        labels_of,
        up,
        schemes=[vocab.scheme.iri],
        languages=tuple(vocab.languages),
        target=vocab.scheme.name or "<vocabulary>",
    )
    ns = vocab.scheme.namespace
    by_check: dict[str, list] = {}
    for f in report.errors:
        if f.check in _COVERED:
            continue
        by_check.setdefault(f.check, []).append(f)
    out = []
    for check, findings in by_check.items():
        ids = sorted({s[len(ns) :] for f in findings for s in f.subjects if s.startswith(ns)})
        topics = [vocab.topic(i) for i in ids if i in vocab]
        n = len(findings)
        where = f" on {_shown(vocab, topics)}" if topics else ""
        out.append(
            GateProblem(
                "lint-error",
                f"lint check {check} fires {n} time{'' if n == 1 else 's'}{where}: "
                f"{findings[0].message}",
            )
        )
    return out


def _followed(vocab, tid: str | None) -> str | None:
    """The active topic a deprecated topic's replacement chain ends at, or None."""
    seen = set()
    while tid is not None and tid in vocab and tid not in seen:
        t = vocab.topic(tid)
        if t.is_active:
            return tid
        seen.add(tid)
        tid = t.replaced_by
    return None


def check_topic_loss(
    vocab,
    previous,
    max_share: float = DEFAULT_MAX_TOPIC_LOSS,
    previous_name: str = "the previous release",
) -> list[GateProblem]:
    """``topic-loss``: the previous release's active topics that are neither active
    nor replaced by an active topic now, against the share the spec allows."""
    if previous is None:
        return []
    before = previous.active_topics()
    if not before:
        return []
    lost = []
    for t in before:
        if t.id in vocab and _followed(vocab, t.id) is not None:
            continue
        rep = t.replaced_by if t.id not in vocab else vocab.topic(t.id).replaced_by
        if _followed(vocab, rep) is None:
            lost.append(t)
    share = len(lost) / len(before)
    if share <= max_share:
        return []
    return [
        GateProblem(
            "topic-loss",
            f"{len(lost)} of the {len(before)} active topics of {previous_name} are gone "
            f"without a replacement ({share:.0%}, more than the {max_share:.0%} "
            f"release.max_topic_loss allows; was the dump cut short?): {_shown(previous, lost)}",
        )
    ]


# --- references no graph mentions ------------------------------------------------


@dataclass(frozen=True)
class _Ref:
    where: str  # "FILE:LINE" (or FILE)
    what: str  # e.g. "select[0] parameter 'root'", "edit 3 (add_alias) topic"
    text: str  # as written
    iri: str | None  # expanded, or None for a plain topic id (or a bad CURIE)


def _spec_refs(ws, spec) -> list[_Ref]:
    from kgkit.templates import load_template
    from kgkit.vocab.spec import _key_lines

    try:
        lines = _key_lines(Path(spec.path).read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError):
        lines = {}

    def at(key: str) -> str:
        line = lines.get(key)
        return f"{spec.path}:{line}" if line else str(spec.path)

    out = []
    for i, sel in enumerate(spec.select):
        try:
            kinds = {p.name: p.kind for p in load_template(ws, sel.template).params}
        except KgkitError:
            continue
        for name in sorted(sel.params):
            if kinds.get(name) != "iri":
                continue
            text = sel.params[name]
            out.append(
                _Ref(
                    at(f"select[{i}].params.{name}"),
                    f"select[{i}] parameter {name!r}",
                    text,
                    _expand(ws, text),
                )
            )
    for key in ("include", "exclude"):
        for i, iri in enumerate(getattr(spec, key)):
            out.append(_Ref(at(f"{key}[{i}]"), f"{key}[{i}]", ws.compact(iri), iri))
    return out


def _expand(ws, text: str) -> str | None:
    try:
        return ws.expand(text)
    except KgkitError:
        return None


_FIELDS = ("topic", "into", "parent")


def _curation_refs(ws, spec, edits) -> list[_Ref]:
    out = []
    for e in edits:
        where = f"{spec.curation}:{e.line}" if e.line else str(spec.curation)
        number = e.index  # counted from 1, as the edit's messages name it
        refs = [(f, e.args[f]) for f in _FIELDS if isinstance(e.args.get(f), str)]
        refs += [("parents", p) for p in e.args.get("parents") or () if isinstance(p, str)]
        for field_name, text in refs:
            iri = _expand(ws, text) if ":" in text else None
            out.append(_Ref(where, f"edit {number} ({e.action}) {field_name}", text, iri))
    return out


def _mentioned(backend, iri: str, graphs) -> bool:
    import pyoxigraph as ox

    from kgkit.query import run_query

    try:
        node = ox.NamedNode(iri)
    except ValueError:
        return False
    q = f"ASK {{ {{ {node} ?p ?o }} UNION {{ ?s ?p {node} }} }}"
    return bool(run_query(backend, q, graphs=graphs).boolean)


_WORDS = re.compile(r"[A-Za-z0-9]+|[^\sA-Za-z0-9_./#:-]+")


def _local_name(text: str) -> str:
    text = text.strip("<>")
    return re.split(r"[/#:]", text)[-1] or text


def _candidates(backend, text: str, graphs, enough: int = 3) -> dict:
    """Entities found by name the way ``kgkit find`` finds them: the whole text, its
    words, then ever shorter beginnings of its longest word, until ``enough`` turn up."""
    from kgkit.entities import find_entities

    words = sorted(_WORDS.findall(re.sub(r"([a-z])([A-Z])", r"\1 \2", text)), key=len, reverse=True)
    tries = [text.replace("-", " ").replace("_", " "), *words]
    if words:
        tries += [words[0][:n] for n in range(len(words[0]) - 1, 1, -1)]
    found: dict = {}
    for t in dict.fromkeys(t for t in tries if len(t) >= 2):
        try:
            for m in find_entities(backend, t, limit=20, graphs=graphs):
                found.setdefault(m.iri, m)
        except KgkitError:
            continue
        if len(found) >= enough:
            break
    return found


def _nearest_entities(found: dict, text: str, limit: int = 3) -> list[str]:
    """The ``found`` entities named most like ``text``, shown as label (CURIE)."""
    key = text.casefold()

    def score(m) -> float:
        names = (_local_name(m.iri), m.name, m.label or "")
        return max(difflib.SequenceMatcher(None, key, n.casefold()).ratio() for n in names)

    ranked = sorted(((score(m), m) for m in found.values()), key=lambda x: (-x[0], x[1].curie))
    # the best one always; the others only when they are close (difflib's usual cutoff)
    best = [m for i, (sc, m) in enumerate(ranked[:limit]) if i == 0 or sc >= 0.6]
    return [f"{m.label or m.name} ({m.curie})" for m in best]


def _nearest_topics(text: str, vocabs, limit: int = 3) -> list[str]:
    """Topic ids and labels most like ``text`` among the given vocabularies."""
    names: dict[str, tuple] = {}
    for v in vocabs:
        if v is None:
            continue
        for t in v.topics:
            label = v.display_label(t.id)
            names.setdefault(t.id.casefold(), (t.id, label))
            if label:
                names.setdefault(label.casefold(), (t.id, label))
    hits = difflib.get_close_matches(text.casefold(), list(names), n=limit * 3, cutoff=0.6)
    out = []
    for h in hits:
        shown = topic_text(names[h][1], names[h][0])
        if shown not in out:
            out.append(shown)
    return out[:limit]


def check_references(
    backend, ws, spec, edits: Iterable = (), vocabs: Iterable = ()
) -> list[GateProblem]:
    """``unknown-entity``: select roots, include/exclude entities and curation targets
    that no graph mentions (curation targets: and that no topic of ``vocabs``, the
    vocabulary and its previous release, has), each with the nearest names."""
    from kgkit.vocab.model import local_id

    vocabs = [v for v in vocabs if v is not None]
    known_ids = {t.id for v in vocabs for t in v.topics}
    known_iris = {x for v in vocabs for t in v.topics for x in (t.source, t.iri) if x}
    graphs = list(spec.graphs) if spec.graphs else None
    out = []
    asked: dict[str, bool] = {}
    for ref in [*_spec_refs(ws, spec), *_curation_refs(ws, spec, edits)]:
        is_curation = ref.what.startswith("edit ")
        if is_curation and ref.iri is None and ref.text in known_ids:
            continue
        if ref.iri is not None and is_curation and ref.iri in known_iris:
            continue
        if ref.iri is not None:
            if ref.iri not in asked:
                asked[ref.iri] = _mentioned(backend, ref.iri, graphs)
            if asked[ref.iri]:
                continue
            local = _local_name(ref.iri)
            near = _nearest_entities(_candidates(backend, local, graphs), local)
            if is_curation:
                near += [n for n in _nearest_topics(local, vocabs) if n not in near]
            cause = "no graph mentions it"
        elif ":" in ref.text:
            near, cause = [], "its prefix is not one of the workspace's"
        else:
            # a topic id: the graph mentions it when an entity would get this id
            found = _candidates(backend, ref.text, graphs)
            if any(local_id(iri) == ref.text for iri in found):
                continue
            near = _nearest_topics(ref.text, vocabs)
            others = {i: m for i, m in found.items() if local_id(i) not in known_ids}
            near += _nearest_entities(others, ref.text)
            cause = "no topic has this id and no graph entity would get it"
        hint = f"; nearest: {', '.join(near[:3])}" if near else "; no similar name found"
        out.append(
            GateProblem(
                "unknown-entity",
                one_line(f"{ref.where}: {ref.what} {ref.text!r}: {cause}{hint}"),
            )
        )
    return out


def gate_problems(
    vocab,
    spec,
    *,
    previous=None,
    previous_name: str = "the previous release",
    backend=None,
    ws=None,
    edits: Iterable = (),
) -> list[GateProblem]:
    """Every problem that keeps ``vocab`` (compiled from ``spec``) from being released.

    ``previous``: the vocabulary of the previous release (for ``topic-loss`` and to
    know curation targets); ``backend`` and ``ws``: the store or endpoint the compile read
    (for ``unknown-entity``); ``edits``: the curation edits. A gate whose input is
    not given is not checked. An empty list means the vocabulary may be released.
    """
    out = check_labels(vocab, spec.languages.required)
    if vocab.active_topics():
        out += check_lint(vocab)
    if backend is not None and ws is not None:
        out += check_references(backend, ws, spec, edits, (vocab, previous))
    max_share = spec.max_topic_loss
    out += check_topic_loss(vocab, previous, max_share, previous_name)
    return out


def vocabulary_gates(ws, spec, vocab, edits: Iterable = (), previous=None, previous_name=None):
    """Every gate problem of a compiled vocabulary (``previous``: the vocabulary of the
    release it follows, named ``previous_name``): what the compile warns about and the
    release refuses."""
    from kgkit.query import connect

    with connect(ws) as backend:
        return gate_problems(
            vocab,
            spec,
            previous=previous,
            previous_name=previous_name or "the previous release",
            backend=backend,
            ws=ws,
            edits=edits,
        )


def check_waivers(waive: Iterable[str], reason: str | None) -> tuple[str, ...]:
    """The gate names to waive, checked: known names (``all`` for every gate), and a
    reason given when any is waived. :class:`ArgumentError` otherwise."""
    names = []
    for name in waive:
        if name == "all":
            names.extend(GATES)
        elif name in GATES:
            names.append(name)
        else:
            raise ArgumentError("waive", f"unknown gate {name!r} (gates: {', '.join(GATES)}, all)")
    if names and not (reason and reason.strip()):
        raise ArgumentError("reason", "say why the gates are waived; the release records it")
    return tuple(dict.fromkeys(names))


def gate_error(where, problems: list[GateProblem], action: str, hint: str) -> GateError:
    """The error refusing a vocabulary: a summary line, then one line per problem."""
    n = len(problems)
    return GateError(
        f"{where}: {n} release gate problem{'' if n == 1 else 's'}; {action} ({hint})",
        params=("waive", "reason", "strict"),
        details=tuple(f"  {p.gate}: {p.message}" for p in problems),
    )


def waived_record(
    problems: list[GateProblem], waived: Sequence[str], reason: str | None
) -> list[dict]:
    """What the manifest and changelog record: each waived gate that fired, why, its problems."""
    out = []
    for gate in GATES:
        hit = [p.message for p in problems if p.gate == gate]
        if hit and gate in waived:
            out.append({"gate": gate, "reason": reason, "problems": hit})
    return out

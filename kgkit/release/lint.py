"""Quality checks on a SKOS vocabulary: a release, a build folder or a SKOS file.

The kinds of problem looked for follow the study of quality issues in SKOS
vocabularies by C. Mader, B. Haslhofer and A. Isaac (TPDL 2012, LNCS 7489); the
checks, their ids and their descriptions are kgkit's own. Three of them enforce
integrity conditions of the W3C SKOS Reference (2009,
https://www.w3.org/TR/2009/REC-skos-reference-20090818/), named in
``Check.skos_condition``: S13 (a concept's preferred, alternative and hidden
labels are pairwise disjoint), S14 (at most one preferred label per language tag)
and S27 (skos:related is disjoint with skos:broaderTransitive).

Levels: ``error`` for what breaks the SKOS integrity conditions or an annotator
reading the vocabulary (cycles, missing, empty or unprintable labels, two
preferred labels in one language, one text used as two kinds of label, a concept
related to its own ancestor);
``warning`` for what a curator should look at (orphans, split hierarchies,
labels shared between concepts, language gaps, top-concept problems).

Concepts marked ``owl:deprecated true`` are kept out of the structural checks and
the language coverage check: a release keeps them on purpose, unlinked.
"""

from __future__ import annotations

import json
import unicodedata
from collections import defaultdict
from dataclasses import asdict, dataclass, field
from pathlib import Path

import networkx as nx
import rdflib
from rdflib.namespace import OWL, RDF, SKOS

from kgkit.errors import LintTargetError, ParseError, one_line
from kgkit.vocab.aliases import match_key  # the lexicon's match key
from kgkit.wording import counted

__all__ = [
    "CHECKS",
    "Check",
    "Finding",
    "LintReport",
    "LintTargetError",
    "lint_concepts",
    "lint_graph",
    "lint_path",
    "lint_turtle",
]

_SKOS_REFERENCE = "W3C SKOS Reference (2009), integrity condition"


@dataclass(frozen=True)
class Check:
    """One check: kgkit's id, its level, what it looks for in plain words, and the
    integrity condition of the W3C SKOS Reference it enforces, if any ("S14")."""

    name: str
    level: str
    summary: str
    skos_condition: str = ""

    @property
    def standard(self) -> str:
        """The SKOS Reference condition this check enforces, or ``""``."""
        return f"{_SKOS_REFERENCE} {self.skos_condition}" if self.skos_condition else ""


# Order is the order of the report.
CHECKS: tuple[Check, ...] = (
    Check("hierarchy-loop", "error",
          "following broader links from a concept leads back to it"),
    Check("no-preferred-label", "error",
          "a concept has no preferred label in any language"),
    Check("blank-label", "error",
          "a label is empty or only white space"),
    Check("two-preferred-labels", "error",
          "a concept has more than one preferred label in one language", "S14"),
    Check("label-kind-clash", "error",
          "one text is two kinds of label (preferred, alternative, hidden) of one concept",
          "S13"),
    Check("related-to-ancestor", "error",
          "two concepts are related (skos:related) while one is above the other", "S27"),
    Check("control-character-in-label", "error",
          "a label holds a control, private-use, unassigned or line-separator character"),
    Check("unlinked-concept", "warning",
          "a concept has no broader, narrower or related link"),
    Check("split-hierarchy", "warning",
          "the linked concepts fall into more than one separate group"),
    Check("shared-label", "warning",
          "two concepts carry the same label text in the same language"),
    Check("language-gap", "warning",
          "a concept has no preferred label in a language the vocabulary uses"),
    Check("scheme-without-top", "warning",
          "a concept scheme names no top concept"),
    Check("top-concept-with-parent", "warning",
          "a top concept of a scheme has a broader concept"),
)  # fmt: skip
_BY_NAME = {c.name: c for c in CHECKS}


@dataclass(frozen=True, order=True)
class Finding:
    """One problem found: which check, on which concepts, and what exactly."""

    check: str
    subjects: tuple[str, ...]
    message: str
    level: str = field(compare=False)
    summary: str = field(compare=False)

    def to_json(self) -> dict:
        d = asdict(self)
        d["subjects"] = list(self.subjects)
        return d


@dataclass
class LintReport:
    """Findings of every check on one vocabulary."""

    target: str
    concepts: int
    findings: list[Finding]

    @property
    def errors(self) -> list[Finding]:
        return [f for f in self.findings if f.level == "error"]

    @property
    def warnings(self) -> list[Finding]:
        return [f for f in self.findings if f.level == "warning"]

    def fired(self) -> set[str]:
        """Names of the checks that found something."""
        return {f.check for f in self.findings}

    def to_json(self) -> dict:
        return {
            "target": self.target,
            "concepts": self.concepts,
            "counts": {"error": len(self.errors), "warning": len(self.warnings)},
            "findings": [f.to_json() for f in self.findings],
            "checks": [
                {"name": c.name, "level": c.level, "summary": c.summary, "standard": c.standard}
                for c in CHECKS
            ],
        }

    def to_text(self) -> str:
        lines = []
        for f in self.findings:
            lines.append(f"{f.level}: {f.check}: {f.message}")
        lines.append(
            f"{self.target}: {counted(self.concepts, 'concept')}, "
            f"{counted(len(self.errors), 'error')}, {counted(len(self.warnings), 'warning')}"
        )
        return "\n".join(lines) + "\n"


def _finding(name: str, subjects, message: str) -> Finding:
    c = _BY_NAME[name]
    return Finding(name, tuple(sorted(str(s) for s in subjects)), message, c.level, c.summary)


def _namer(schemes: set[str], labels: dict | None = None):
    """Short names for messages: an IRI inside the namespace of a concept scheme shows as
    the rest of it (in kgkit's own files, the topic id); any other IRI in full; with its
    preferred label before it when it has one (``labels``: node -> label), as other
    commands show topics. Findings keep full IRIs in ``subjects``."""
    bases = set()
    for s in schemes:
        bases |= {s} if s.endswith(("/", "#")) else {s + "/", s + "#"}
    ordered = sorted(bases, key=len, reverse=True)

    def short(node) -> str:
        text = str(node)
        for base in ordered:
            if text.startswith(base) and len(text) > len(base):
                return text[len(base) :]
        return text

    def name(node) -> str:
        label = (labels or {}).get(node)
        return f"{label} ({short(node)})" if label else short(node)

    return name


def _display_labels(labels_of: dict, languages: tuple[str, ...] = ()) -> dict:
    """node -> the preferred label to show: in the first of ``languages``, then in the
    language most concepts have one in (ties: the smaller tag), else the untagged one."""
    counts: dict[str, int] = defaultdict(int)
    for labels in labels_of.values():
        for lang in {lang for _, lang in labels["preferred"]}:
            counts[lang] += 1
    order = [lg.lower() for lg in languages]
    order += sorted((lg for lg in counts if lg), key=lambda lg: (-counts[lg], lg)) + [""]
    out = {}
    for node, labels in labels_of.items():
        by_lang = {}
        for text, lang in sorted(labels["preferred"]):
            by_lang.setdefault(lang, text)
        label = next((by_lang[lg] for lg in order if by_lang.get(lg, "").strip()), None)
        if label is not None:
            out[node] = one_line(label)
    return out


def _is_unprintable(ch: str) -> bool:
    # Zero-width (non-)joiners are format characters that scripts such as Persian
    # and Devanagari need in ordinary words; every other format character is invisible.
    if ch in "\u200c\u200d":
        return False
    return unicodedata.category(ch) in {"Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"}


def _lang(lit: rdflib.term.Node) -> str:
    return (getattr(lit, "language", None) or "").lower()


def lint_graph(
    g: rdflib.Graph,
    target: str = "<graph>",
    languages: tuple[str, ...] = (),
    warnings: bool = True,
) -> LintReport:
    """Run every check on a parsed SKOS graph.

    Messages name a concept by its preferred label (in the first of ``languages`` it
    has one in; without them, in the language most concepts have one in) beside its
    short name. ``warnings=False`` runs only the checks of level error (what the
    release gates need: the warning checks took most of the time on large vocabularies).

    >>> g = rdflib.Graph().parse(data='''
    ... @prefix skos: <http://www.w3.org/2004/02/skos/core#> .
    ... <http://example.org/a> a skos:Concept ; skos:broader <http://example.org/a> .''',
    ... format="turtle")
    >>> sorted(lint_graph(g).fired())
    ['hierarchy-loop', 'no-preferred-label', 'unlinked-concept']
    """

    # one pass per predicate, then plain Python: rdflib look-ups per node are slow
    def pairs(p):
        return list(g.subject_objects(p))

    broader, narrower, related = pairs(SKOS.broader), pairs(SKOS.narrower), pairs(SKOS.related)
    kinds = {"preferred": SKOS.prefLabel, "alternative": SKOS.altLabel, "hidden": SKOS.hiddenLabel}
    labels_of: dict = defaultdict(_no_labels)
    for kind, p in kinds.items():
        for s_, o in pairs(p):
            labels_of[s_][kind].append((str(o), _lang(o)))
    labels_of = dict(labels_of)
    typed = defaultdict(set)
    for s_, o in pairs(RDF.type):
        typed[str(o)].add(s_)  # keyed by text: the terms may be rdflib's or lint_turtle's
    top_of, has_top = pairs(SKOS.topConceptOf), pairs(SKOS.hasTopConcept)

    concepts: set = set(typed[str(SKOS.Concept)])
    for rel in (broader, narrower, related):
        for s_, o in rel:
            concepts.update((s_, o))
    concepts.update(c for c, _ in top_of)
    concepts.update(c for _, c in has_top)
    # anything carrying a SKOS label is a concept unless typed as a scheme or collection
    others = typed[str(SKOS.ConceptScheme)] | typed[str(SKOS.Collection)]
    concepts.update(s_ for s_ in labels_of if s_ not in others)
    concepts = {c for c in concepts if not isinstance(c, _LITERALS)}
    deprecated = {
        s_ for s_, o in pairs(OWL.deprecated) if str(o).lower() == "true" and s_ in concepts
    }
    live = concepts - deprecated
    schemes_named = {str(s_) for s_ in typed[str(SKOS.ConceptScheme)]}
    schemes_named |= {str(o) for _, o in pairs(SKOS.inScheme)}
    schemes_named |= {str(sc) for _, sc in top_of} | {str(sc) for sc, _ in has_top}
    name = _namer(schemes_named, _display_labels(labels_of, languages))

    # hierarchy: child -> parent edges from broader and from narrower
    up_links = broader + [(c, p) for p, c in narrower]
    out, tree = _error_findings(concepts, labels_of, up_links, related, name)
    if warnings:  # every check from here on is of level warning
        out += _warning_findings(
            concepts, live, labels_of, (broader, narrower, related), tree, name,
            typed, pairs, top_of, has_top,
        )  # fmt: skip

    order = {c.name: i for i, c in enumerate(CHECKS)}
    out = sorted(set(out), key=lambda f: (order[f.check], f.subjects, f.message))
    return LintReport(target=target, concepts=len(concepts), findings=out)


def _no_labels() -> dict:
    return {"preferred": [], "alternative": [], "hidden": []}


def lint_concepts(
    concepts,
    labels_of: dict,
    up_links,
    related=(),
    schemes=(),
    languages: tuple[str, ...] = (),
    target: str = "<vocabulary>",
) -> LintReport:
    """The checks of level error on a vocabulary given as plain data, with no SKOS text
    to parse (the release gates lint the vocabulary the compile holds in memory):

    - ``concepts``: the concepts' IRIs;
    - ``labels_of``: IRI -> ``{"preferred"|"alternative"|"hidden": [(text, language)]}``,
      language lower case, ``""`` when untagged (a concept may be missing);
    - ``up_links``: ``(narrower IRI, broader IRI)`` pairs, from skos:broader and
      skos:narrower alike; ``related``: skos:related pairs;
    - ``schemes``: concept scheme IRIs (messages shorten IRIs in their namespace).

    The same checks :func:`lint_graph` runs on a file, so the findings are those
    ``lint_turtle(..., warnings=False)`` makes of the SKOS text of the same data.

    >>> lint_concepts(["x:a"], {}, [("x:a", "x:a")]).fired() == {
    ...     "hierarchy-loop", "no-preferred-label"}
    True
    """
    concepts = set(concepts)
    namer = []

    def name(node) -> str:  # the display labels are worked out only if something is found
        if not namer:
            namer.append(_namer(set(schemes), _display_labels(labels_of, languages)))
        return namer[0](node)

    out, _ = _error_findings(concepts, labels_of, list(up_links), list(related), name)
    order = {c.name: i for i, c in enumerate(CHECKS)}
    out = sorted(set(out), key=lambda f: (order[f.check], f.subjects, f.message))
    return LintReport(target=target, concepts=len(concepts), findings=out)


def _error_findings(concepts: set, labels_of: dict, up_links: list, related: list, name):
    """Every check of level error: THE definition of each, for a file and for a
    vocabulary held in memory alike. Returns the findings and the hierarchy (node ->
    set of the nodes right above it) the warning checks look at too."""
    out: list[Finding] = []
    up_of: dict = defaultdict(set)
    for low, high in up_links:
        up_of[low].add(high)
    for comp in _loops(up_of):
        names = ", ".join(sorted(name(n) for n in comp))
        out.append(_finding("hierarchy-loop", comp, f"broader links loop through {names}"))
    # SKOS S27: a related pair where one concept is above the other (either way round,
    # since skos:related is symmetric)
    for a, b in sorted({tuple(sorted((x, y), key=str)) for x, y in related}, key=str):
        if a == b:
            continue
        for low, high in ((a, b), (b, a)):
            if high in _above(up_of, low):
                out.append(
                    _finding(
                        "related-to-ancestor",
                        [low, high],
                        f"{name(low)} is related to {name(high)}, "
                        "which is above it in the hierarchy",
                    )
                )
    none = _no_labels()
    for c in sorted(concepts, key=str):
        out += _label_findings(c, labels_of.get(c, none), name)
    return out, up_of


def _above(up_of: dict, node) -> set:
    """Every node reached from ``node`` by following links up (``node`` itself only
    through a loop)."""
    seen: set = set()
    todo = list(up_of.get(node, ()))
    while todo:
        n = todo.pop()
        if n not in seen:
            seen.add(n)
            todo.extend(up_of.get(n, ()))
    return seen


def _loops(up_of: dict) -> list[set]:
    """The groups of nodes that following links up leads round in a circle: the
    strongly connected components of more than one node, or of one node linked to
    itself. Nodes from which a chain of links ends (all of a sound hierarchy) are
    peeled off first in plain Python; networkx looks only at what is left."""
    below: dict = defaultdict(list)
    left = {}
    for low, highs in up_of.items():
        left[low] = len(highs)
        for high in highs:
            below[high].append(low)
    todo = [n for n in below if n not in left]  # linked to from below, nothing above
    while todo:
        for low in below.get(todo.pop(), ()):
            left[low] -= 1
            if not left[low]:
                todo.append(low)
    rest = {n for n, k in left.items() if k}
    if not rest:
        return []
    g = nx.DiGraph()
    g.add_edges_from((low, high) for low in rest for high in up_of[low] if high in rest)
    return [
        comp
        for comp in nx.strongly_connected_components(g)
        if len(comp) > 1 or any(g.has_edge(n, n) for n in comp)
    ]


def _label_findings(c, labels: dict, name) -> list[Finding]:
    """The label checks of level error on one concept (``labels``: kind -> [(text, lang)])."""
    out: list[Finding] = []
    prefs = labels["preferred"]
    if not prefs:
        out.append(_finding("no-preferred-label", [c], f"{name(c)} has no preferred label"))
    elif len(prefs) > 1:
        by_lang = defaultdict(set)
        for text, lang in prefs:
            by_lang[lang].add(text)
        for lang, texts in sorted(by_lang.items()):
            if len(texts) > 1:
                shown = ", ".join(repr(t) for t in sorted(texts))
                out.append(
                    _finding(
                        "two-preferred-labels",
                        [c],
                        f"{name(c)} has {len(texts)} preferred labels in "
                        f"{lang or 'no language'}: {shown}",
                    )
                )
    seen: dict[tuple[str, str], str] = {}
    for kind, lits in labels.items():
        for key in lits:
            text = key[0]
            if not text.strip():
                out.append(_finding("blank-label", [c], f"{name(c)} has an empty {kind} label"))
                continue
            if not text.isprintable():  # False for every character flagged here
                bad = sorted({f"U+{ord(ch):04X}" for ch in text if _is_unprintable(ch)})
                if bad:
                    out.append(
                        _finding(
                            "control-character-in-label",
                            [c],
                            f"{kind} label {text!r} of {name(c)} holds {', '.join(bad)}",
                        )
                    )
            first = seen.setdefault(key, kind)
            if first != kind:
                out.append(
                    _finding(
                        "label-kind-clash",
                        [c],
                        f"{text!r} is both the {first} and the {kind} label of {name(c)}",
                    )
                )
    return out


def _warning_findings(
    concepts, live, labels_of, links_by_kind, tree, name, typed, pairs, top_of, has_top
) -> list[Finding]:
    """Every check of level warning (on a parsed file only)."""
    broader, narrower, related = links_by_kind
    out: list[Finding] = []
    shared: dict[tuple[str, str], set] = defaultdict(set)
    for c in live:
        for kind, lits in labels_of.get(c, _no_labels()).items():
            if kind == "hidden":
                continue
            for text, lang in lits:
                if text.strip():
                    shared[(match_key(text), lang)].add(c)
    for (key, lang), owners in sorted(shared.items()):
        if len(owners) > 1:
            names = ", ".join(sorted(name(o) for o in owners))
            out.append(
                _finding(
                    "shared-label",
                    owners,
                    f"label {key!r} ({lang or 'no language'}) is used by {names}",
                )
            )

    # language coverage: languages of the preferred labels of live concepts
    def prefs(c):
        return labels_of[c]["preferred"] if c in labels_of else []

    langs_of = {c: {lang for _, lang in prefs(c)} - {""} for c in live}
    used = set().union(*langs_of.values()) if langs_of else set()
    for c in sorted(live, key=str):
        if not prefs(c):
            continue  # reported as no-preferred-label
        missing = sorted(used - langs_of[c])
        if missing:
            out.append(
                _finding(
                    "language-gap",
                    [c],
                    f"{name(c)} has no preferred label in {', '.join(missing)}",
                )
            )

    # structure among live concepts: orphans and separate groups
    links = nx.Graph()
    links.add_nodes_from(live)
    for rel in (broader, narrower, related):
        links.add_edges_from((a, b) for a, b in rel if a in live and b in live and a != b)
    for c in sorted(live, key=str):
        if links.degree(c) == 0:
            out.append(
                _finding(
                    "unlinked-concept",
                    [c],
                    f"{name(c)} has no broader, narrower or related link",
                )
            )
    groups = [comp for comp in nx.connected_components(links) if len(comp) > 1]
    if len(groups) > 1:
        groups.sort(key=lambda comp: (-len(comp), min(str(n) for n in comp)))
        desc = "; ".join(f"{len(comp)} around {name(min(comp, key=str))}" for comp in groups)
        out.append(
            _finding(
                "split-hierarchy",
                [min(str(n) for n in comp) for comp in groups],
                f"linked concepts fall into {len(groups)} separate groups: {desc}",
            )
        )

    # concept schemes and their top concepts
    schemes = set(typed[str(SKOS.ConceptScheme)]) | {o for _, o in pairs(SKOS.inScheme)}
    schemes |= {sc for _, sc in top_of}
    tops = defaultdict(set)
    for sc, c in has_top:
        tops[sc].add(c)
    for c, sc in top_of:
        tops[sc].add(c)
    for sc in sorted(schemes, key=str):
        if not tops[sc]:
            out.append(
                _finding("scheme-without-top", [sc], f"concept scheme {sc} names no top concept")
            )
    for sc in sorted(tops, key=str):
        for c in sorted(tops[sc], key=str):
            parents = sorted(name(p) for p in tree.get(c, ()))
            if c in live and parents:
                out.append(
                    _finding(
                        "top-concept-with-parent",
                        [c],
                        f"top concept {name(c)} of {sc} has broader {', '.join(parents)}",
                    )
                )
    return out


def _skos_file(target: Path) -> Path:
    if target.is_dir():
        path = target / "skos.ttl"
        if not path.is_file():
            raise LintTargetError(
                f"{target}: no skos.ttl in this folder (a release or build folder)"
            )
        return path
    if not target.is_file():
        raise LintTargetError(f"{target}: no such file or folder")
    return target


def lint_path(target: str | Path) -> LintReport:
    """Lint a release folder, a build folder (both hold ``skos.ttl``) or a SKOS file.

    The file is read as Turtle unless its extension names another RDF syntax
    rdflib knows. A syntax error raises :class:`ParseError` with file and line.
    """
    path = _skos_file(Path(target))
    fmt = rdflib.util.guess_format(str(path)) or "turtle"
    g = rdflib.Graph()
    try:
        g.parse(str(path), format=fmt)
    except Exception as exc:  # rdflib parsers raise many types; every one is bad input here
        line = getattr(exc, "lines", None)
        cause = (
            getattr(exc, "_why", None) or str(exc).splitlines()[0]
            if str(exc)
            else type(exc).__name__
        )
        raise ParseError(
            str(path), line + 1 if isinstance(line, int) else None, None, cause
        ) from None
    return lint_graph(g, target=str(target), languages=_folder_languages(Path(target)))


def _folder_languages(target: Path) -> tuple[str, ...]:
    """The display languages a build or release folder's report records, if any."""
    report = target / "report.json"
    if not target.is_dir() or not report.is_file():
        return ()
    try:
        spec = json.loads(report.read_text(encoding="utf-8")).get("spec") or {}
    except (OSError, ValueError, AttributeError):
        return ()  # the labels then follow the file's own languages
    langs = spec.get("languages") if isinstance(spec, dict) else None
    return tuple(x for x in langs if isinstance(x, str)) if isinstance(langs, list) else ()


class _PairsByPredicate:
    """The one look-up :func:`lint_graph` makes, ``subject_objects(predicate)``, over
    statements grouped by predicate (no rdflib graph and its indexes to build)."""

    def __init__(self, pairs: dict[str, list]):
        self._pairs = pairs

    def subject_objects(self, predicate):
        return self._pairs.get(str(predicate), [])


def lint_turtle(
    text: str,
    target: str = "skos.ttl",
    languages: tuple[str, ...] = (),
    warnings: bool = True,
) -> LintReport:
    """Run every check on SKOS in Turtle held in memory (the release gates lint the
    text a release is about to write). Parsed by pyoxigraph into plain strings (IRIs)
    and :class:`_Literal` strings: rdflib's terms compare in Python, and building them
    and comparing them took most of the time on large vocabularies."""
    import pyoxigraph as ox

    literal, named = ox.Literal, ox.NamedNode
    pairs: dict[str, list] = defaultdict(list)
    try:
        for t in ox.parse(text.encode("utf-8"), format=ox.RdfFormat.TURTLE):
            o = t.object
            if type(o) is named:
                obj = o.value
            elif type(o) is literal:
                obj = _Literal(o.value)
                obj.language = o.language
            else:
                obj = f"_:{o.value}"
            s_ = t.subject
            pairs[t.predicate.value].append(
                (s_.value if type(s_) is named else f"_:{s_.value}", obj)
            )
    except SyntaxError as exc:
        raise ParseError(target, exc.lineno, exc.offset, str(exc.msg)) from None
    return lint_graph(
        _PairsByPredicate(pairs), target=target, languages=languages, warnings=warnings
    )


class _Literal(str):
    """A literal's text with its ``language`` (None when untagged), as lint reads it."""

    language: str | None = None


#: what lint_graph counts as a literal (never a concept)
_LITERALS = (rdflib.Literal, _Literal)


def report_json(report: LintReport) -> str:
    return json.dumps(report.to_json(), sort_keys=True, ensure_ascii=False)

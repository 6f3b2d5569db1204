"""Looking at entities: a card for one, ranked name matches, an indented tree.

These run the built-in templates (``card``, ``search``, ``descendants``) and a few
small look-ups of labels and parents, so they work unchanged on the embedded store
and on a remote endpoint. They return data; :func:`format_tree` and
:func:`format_card` turn it into text for the command line.

Entities are named by CURIE, ``<IRI>``, exact label or code (the profile's
``notation``). With graph settings in ``kgkit.yaml`` (``graphs:``), labels are read
graph by graph: each graph's own label and parent predicates, and its untagged
literals in its ``untagged_language``.
"""

from __future__ import annotations

import re
from collections import deque
from dataclasses import dataclass, field

import pyoxigraph as ox

from kgkit.errors import AmbiguousTermError, ArgumentError, KgkitError, NotFoundError
from kgkit.query import Backend, run_query
from kgkit.templates import bind_template, load_template, read_graphs, run_template

__all__ = [
    "AmbiguousTermError",
    "EntityCard",
    "Match",
    "TreeLine",
    "find_entities",
    "format_card",
    "format_matches",
    "format_tree",
    "labels_of",
    "resolve_term",
    "show_entity",
    "tree_of",
]

#: look-ups of many entities go in chunks of this many IRIs (VALUES lists slow down fast)
CHUNK = 100


def _rows_for_items(backend: Backend, select: str, body: str, iris, graphs):
    """Rows of ``SELECT select WHERE { VALUES ?item {...} body }`` over ``iris``.

    The items go in VALUES blocks of at most ``CHUNK`` IRIs: a long VALUES list is very
    slow in pyoxigraph (DEVELOPERS.md, "Measured facts").
    """
    uniq = sorted(set(iris))
    for i in range(0, len(uniq), CHUNK):
        chunk = " ".join(str(ox.NamedNode(x)) for x in uniq[i : i + CHUNK])
        q = f"SELECT {select} WHERE {{ VALUES ?item {{ {chunk} }} {body} }}"
        yield from run_query(backend, q, graphs=graphs).rows


@dataclass
class Match:
    """One entity found by name."""

    iri: str
    curie: str
    name: str
    language: str
    kind: str  # "label" | "alias" | "code"
    how: str  # "exact" | "prefix" | "word" | "substring"
    label: str | None = None  # its preferred label, when the match was an alias
    parents: list[tuple[str, str | None]] = field(default_factory=list)  # (curie, label)


def _describe(m: Match) -> str:
    shown = f"{m.curie}  {m.label or m.name}"
    if m.kind in ("alias", "code"):
        shown += f"  ({m.kind} {m.name!r})"
    if m.parents:
        shown += "  under " + ", ".join(label or curie for curie, label in m.parents)
    return shown


@dataclass
class EntityCard:
    iri: str
    curie: str
    labels: dict[str, list[str]]
    aliases: dict[str, list[str]]
    descriptions: dict[str, list[str]]
    types: list[str]  # CURIEs
    parents: list[tuple[str, str | None]]
    notations: list[str]
    children: int


@dataclass
class TreeLine:
    depth: int
    iri: str
    curie: str
    label: str | None
    below: int  # distinct entities below it
    parents: int  # number of parents it has in the graph
    mark: str | None = None  # "cycle" | "repeat" | "more"
    more: int = 0  # with mark "more": how many children were not shown


def _is_identifier(term: str, backend: Backend) -> bool:
    term = term.strip()
    if term.startswith("<") and term.endswith(">"):
        return True
    m = re.match(r"^([A-Za-z][A-Za-z0-9_.-]*)?:(\S*)$", term)
    if m and (m.group(1) or "") in backend.ws.prefixes:
        return True
    return bool(re.match(r"^[a-zA-Z][a-zA-Z0-9+.-]*:[^\s<>\"]+$", term)) and (
        "/" in term or term.startswith("urn:")
    )


def _lang_rank(lang: str, languages: tuple[str, ...]) -> int:
    for i, want in enumerate(languages):
        if lang == want or lang.startswith(want + "-"):
            return i
    return len(languages) + (0 if lang == "" else 1)


def _per_graph(backend: Backend) -> dict[str, tuple] | None:
    """content graph IRI -> (profile, untagged language) when ``kgkit.yaml`` has graph
    settings (``None`` without them: one profile reads every graph)."""
    ws = backend.ws
    names = getattr(backend, "graph_names", None) or {}
    if not ws.config.graphs or not names:
        return None
    return {iri: (ws.profile_for(n), ws.untagged_language(n) or "") for iri, n in names.items()}


def _role_rows(backend: Backend, role: str, select: str, iris, graphs):
    """(item, predicate, object, profile, untagged language) for the ``role`` statements
    of ``iris``, each read with the settings of the graph holding it."""
    ws = backend.ws
    preds = list(ws.profile_over(read_graphs(backend, graphs))[role])
    if not preds or not iris:
        return
    plist = ", ".join(str(ox.NamedNode(p)) for p in preds)
    per_graph = _per_graph(backend)
    if per_graph is None:
        body = f"?item ?p ?o . FILTER(?p IN ({plist}) && {select}(?o))"
        for item, p, o in _rows_for_items(backend, "?item ?p ?o", body, iris, graphs):
            yield item, p, o, ws.profile, ""
        return
    body = f"GRAPH ?g {{ ?item ?p ?o }} FILTER(?p IN ({plist}) && {select}(?o))"
    for item, p, o, g in _rows_for_items(backend, "?item ?p ?o ?g", body, iris, graphs):
        prof, untagged = per_graph.get(g.value, (ws.profile, ""))
        if p.value in prof[role]:
            yield item, p, o, prof, untagged


def labels_of(backend: Backend, iris: list[str], graphs: list[str] | None = None) -> dict[str, str]:
    """The preferred label of each IRI that has one: the workspace languages in
    order, then untagged, then any; label predicates in profile order."""
    ws = backend.ws
    best: dict[str, tuple] = {}
    for item, p, lit, prof, untagged in _role_rows(backend, "label", "isLiteral", iris, graphs):
        key = (
            _lang_rank(lit.language or untagged, ws.config.languages),
            prof["label"].index(p.value),
            lit.value,
        )
        if item.value not in best or key < best[item.value][0]:
            best[item.value] = (key, lit.value)
    return {k: v[1] for k, v in best.items()}


def _parents_of(
    backend: Backend, iris: list[str], graphs: list[str] | None = None
) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {x: [] for x in iris}
    for item, _p, parent, _prof, _u in _role_rows(backend, "parent", "isIRI", iris, graphs):
        out[item.value].append(parent.value)
    return {k: sorted(set(v)) for k, v in out.items()}


def _exact_label_matches(backend: Backend, text: str, graphs: list[str] | None = None) -> list[str]:
    ws = backend.ws
    preds = list(ws.profile_over(read_graphs(backend, graphs))["label"])
    if not preds:
        return []
    plist = ", ".join(str(ox.NamedNode(p)) for p in preds)
    per_graph = _per_graph(backend)
    # with graph settings, a predicate names a label only in the graphs that map it so
    pattern = "?item ?p ?l" if per_graph is None else "GRAPH ?g { ?item ?p ?l }"
    select = "?item" if per_graph is None else "?item ?p ?g"

    def items(q: str) -> list[str]:
        rows = run_query(backend, q, graphs=graphs).rows
        if per_graph is None:
            return sorted({r[0].value for r in rows})
        return sorted(
            {
                r[0].value
                for r in rows
                if r[1].value in per_graph.get(r[2].value, (ws.profile,))[0]["label"]
            }
        )

    # fast: exact literals in the workspace languages and untagged, found through the index
    forms = [ox.Literal(text)] + [ox.Literal(text, language=lang) for lang in ws.config.languages]
    values = " ".join(str(f) for f in forms)
    found = items(
        f"SELECT DISTINCT {select} WHERE {{ VALUES ?l {{ {values} }} {pattern} . "
        f"FILTER(?p IN ({plist})) }}"
    )
    if found:
        return found
    # then any language, by a scan
    return items(
        f"SELECT DISTINCT {select} WHERE {{ {pattern} . FILTER(?p IN ({plist})) "
        f"FILTER(isLiteral(?l) && STR(?l) = {ox.Literal(text)}) }}"
    )


def _code_matches(backend: Backend, text: str, graphs: list[str] | None = None) -> list[str]:
    """Entities whose code (a value of the profile's ``notation``) is ``text``, whatever
    the literal's datatype (SKOS notations often carry one of their own)."""
    preds = list(backend.ws.profile_over(read_graphs(backend, graphs))["notation"])
    if not preds or not text.strip():
        return []
    path = "|".join(str(ox.NamedNode(p)) for p in preds)
    # the plain literal through the index first; a typed one by a scan of the notations
    q = f"SELECT DISTINCT ?item WHERE {{ ?item ({path}) {ox.Literal(text)} }}"
    found = sorted(r[0].value for r in run_query(backend, q, graphs=graphs).rows)
    if found:
        return found
    q = (
        f"SELECT DISTINCT ?item WHERE {{ ?item ({path}) ?code . "
        f"FILTER(isLiteral(?code) && STR(?code) = {ox.Literal(text)}) }}"
    )
    return sorted(r[0].value for r in run_query(backend, q, graphs=graphs).rows)


def resolve_term(backend: Backend, term: str, graphs: list[str] | None = None) -> str:
    """The IRI a CURIE, ``<IRI>``, exact label or code (the profile's ``notation``)
    names; a label is tried before a code.

    Raises :class:`AmbiguousTermError` when a label (or code) names several entities.
    """
    ws = backend.ws
    if _is_identifier(term, backend):
        try:
            return ox.NamedNode(ws.expand(term, "term")).value
        except (KgkitError, ValueError) as exc:
            raise ArgumentError("term", f"{term!r} is not a valid IRI or CURIE ({exc})") from None
    found = _exact_label_matches(backend, term, graphs)
    how = "label"
    if not found:
        found = _code_matches(backend, term, graphs)
        how = "code"
    if not found:
        raise NotFoundError(f"no entity is labelled or coded {term!r}; try `kgkit find {term}`")
    if len(found) > 1:
        labels = labels_of(backend, found, graphs)
        parents = _parents_of(backend, found, graphs)
        plabels = labels_of(backend, [p for ps in parents.values() for p in ps], graphs)
        cands = [
            Match(
                iri=x,
                curie=ws.compact(x),
                name=term if how == "code" else labels.get(x, term),
                language="",
                kind=how,
                how="exact",
                label=labels.get(x),
                parents=[(ws.compact(p), plabels.get(p)) for p in parents[x]],
            )
            for x in found
        ]
        raise AmbiguousTermError(term, cands, tuple("  " + _describe(c) for c in cands))
    return found[0]


def _by_lang(values: list[ox.Literal]) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {}
    for v in values:
        out.setdefault(v.language or "", []).append(v.value)
    return {k: sorted(set(v)) for k, v in sorted(out.items())}


def _untagged_language_of(backend: Backend, iri: str, graphs: list[str] | None) -> str:
    """The language the untagged literals about ``iri`` are read as: the
    ``untagged_language`` its graphs agree on ("" when they do not, or have none)."""
    per_graph = _per_graph(backend)
    if per_graph is None:
        return ""
    q = f"SELECT DISTINCT ?g WHERE {{ GRAPH ?g {{ {ox.NamedNode(iri)} ?p ?o }} }}"
    langs = {
        per_graph.get(r[0].value, (None, ""))[1] for r in run_query(backend, q, graphs=graphs).rows
    }
    return langs.pop() if len(langs) == 1 else ""


def show_entity(backend: Backend, term: str, graphs: list[str] | None = None) -> EntityCard:
    """The card of the entity a CURIE, IRI, exact label or code names."""
    iri = resolve_term(backend, term, graphs)
    res = run_template(backend, "card", {"entity": f"<{iri}>"}, graphs=graphs)
    fields: dict[str, list] = {}
    for fld, value in res.rows:
        fields.setdefault(fld.value, []).append(value)
    lits = {k: [v for v in fields.get(k, []) if isinstance(v, ox.Literal)] for k in fields}
    untagged = _untagged_language_of(backend, iri, graphs)
    if untagged:
        for k in ("label", "alias", "description"):
            lits[k] = [
                v if v.language else ox.Literal(v.value, language=untagged) for v in lits.get(k, [])
            ]
    parents = sorted({v.value for v in fields.get("parent", []) if isinstance(v, ox.NamedNode)})
    plabels = labels_of(backend, parents, graphs)
    ws = backend.ws
    children = fields.get("children", [])
    card = EntityCard(
        iri=iri,
        curie=ws.compact(iri),
        labels=_by_lang(lits.get("label", [])),
        aliases=_by_lang(lits.get("alias", [])),
        descriptions=_by_lang(lits.get("description", [])),
        types=sorted(
            {ws.compact(v.value) for v in fields.get("type", []) if isinstance(v, ox.NamedNode)}
        ),
        parents=[(ws.compact(p), plabels.get(p)) for p in parents],
        notations=sorted({v.value for v in fields.get("notation", [])}),
        children=int(children[0].value) if children else 0,
    )
    if not any((card.labels, card.aliases, card.descriptions, card.types, card.parents)) and (
        not card.children and not card.notations
    ):
        ask = run_query(
            backend, f"ASK {{ {{ <{iri}> ?p ?o }} UNION {{ ?s ?p <{iri}> }} }}", graphs=graphs
        )
        if not ask.boolean:
            raise NotFoundError(f"{card.curie}: no statement in the graphs mentions it")
    return card


def format_card(card: EntityCard) -> str:
    """The card as text, one field a line."""
    out = [f"{card.curie}  <{card.iri}>"]

    def langs(title: str, values: dict[str, list[str]]) -> None:
        for lang, texts in values.items():
            for t in texts:
                out.append(f"  {title:<12} {t}" + (f"  @{lang}" if lang else ""))

    langs("label", card.labels)
    langs("alias", card.aliases)
    langs("description", card.descriptions)
    for code in card.notations:
        out.append(f"  {'code':<12} {code}")
    for t in card.types:
        out.append(f"  {'type':<12} {t}")
    for curie, label in card.parents:
        out.append(f"  {'parent':<12} {curie}" + (f"  {label}" if label else ""))
    out.append(f"  {'children':<12} {card.children}")
    return "\n".join(out) + "\n"


_HOW = {"exact": 0, "prefix": 1, "word": 2, "substring": 3}
_KIND = {"label": 0, "code": 1, "alias": 2}


def find_entities(
    backend: Backend,
    text: str,
    language: str | None = None,
    limit: int = 20,
    graphs: list[str] | None = None,
) -> list[Match]:
    """Entities whose label, alias or code (the profile's ``notation``) holds ``text``
    (ignoring case), best first.

    Ranking: the whole name equal to the text, then names starting with it, then
    a word starting with it, then anywhere; labels before codes before aliases;
    shorter names first. Each match carries its parents, so two entities sharing a name can be
    told apart.
    """
    if not text.strip():
        raise ArgumentError("text", "give some text to look for")
    params = {"text": text, "match": "substring"}
    if language:
        params["lang"] = language
    res = run_template(backend, "search", params, graphs=graphs)
    needle = text.casefold()
    best: dict[str, tuple] = {}
    for item, name, kind in res.rows:
        folded = name.value.casefold()
        if folded == needle:
            how = "exact"
        elif folded.startswith(needle):
            how = "prefix"
        elif re.search(r"(?:^|\W)" + re.escape(needle), folded):
            how = "word"
        else:
            how = "substring"
        key = (_HOW[how], _KIND[kind.value], len(name.value), name.value, item.value)
        if item.value not in best or key < best[item.value][0]:
            best[item.value] = (key, name, kind.value, how)
    ranked = sorted(best.items(), key=lambda kv: kv[1][0])[:limit]
    iris = [iri for iri, _ in ranked]
    labels = labels_of(backend, iris, graphs)
    parents = _parents_of(backend, iris, graphs)
    plabels = labels_of(backend, [p for ps in parents.values() for p in ps], graphs)
    ws = backend.ws
    return [
        Match(
            iri=iri,
            curie=ws.compact(iri),
            name=name.value,
            language=name.language or "",
            kind=kind,
            how=how,
            label=labels.get(iri),
            parents=[(ws.compact(p), plabels.get(p)) for p in parents[iri]],
        )
        for iri, (_, name, kind, how) in ranked
    ]


def tree_of(
    backend: Backend,
    term: str,
    depth: int = 2,
    max_children: int = 50,
    graphs: list[str] | None = None,
) -> list[TreeLine]:
    """The hierarchy below an entity, ``depth`` levels deep, as lines in display order.

    Each line counts the distinct entities below it (all levels, not only those
    shown). An entity with several parents is shown in full once; where it comes
    again it is marked ``repeat``. A child that is also an ancestor on the way
    down closes a cycle: it is marked ``cycle`` and not followed. At most
    ``max_children`` children are shown under one entity, then a ``more`` line.
    """
    if depth < 0:
        raise ArgumentError("depth", "must be 0 or more")
    root = resolve_term(backend, term, graphs)
    tpl = load_template(backend.ws, "descendants")
    text, _ = bind_template(tpl, {"root": f"<{root}>"}, backend.ws, read_graphs(backend, graphs))
    children: dict[str, set[str]] = {}
    for parent, item in run_query(backend, text, graphs=graphs).rows:
        if isinstance(parent, ox.NamedNode) and isinstance(item, ox.NamedNode):
            children.setdefault(parent.value, set()).add(item.value)
    kids = {k: sorted(v) for k, v in children.items()}

    def below(node: str) -> int:
        seen = {node}
        queue = deque([node])
        while queue:
            for c in kids.get(queue.popleft(), ()):
                if c not in seen:
                    seen.add(c)
                    queue.append(c)
        return len(seen) - 1

    lines: list[TreeLine] = []
    shown: set[str] = set()

    def visit(node: str, level: int, path: tuple[str, ...]) -> None:
        shown.add(node)
        lines.append(TreeLine(level, node, "", None, below(node), 0))
        if level >= depth:
            return
        cs = kids.get(node, [])
        for c in cs[:max_children]:
            if c in path or c == node:
                lines.append(TreeLine(level + 1, c, "", None, 0, 0, mark="cycle"))
            elif c in shown:
                lines.append(TreeLine(level + 1, c, "", None, below(c), 0, mark="repeat"))
            else:
                visit(c, level + 1, (*path, node))
        if len(cs) > max_children:
            lines.append(
                TreeLine(level + 1, "", "", None, 0, 0, mark="more", more=len(cs) - max_children)
            )

    visit(root, 0, ())
    iris = [ln.iri for ln in lines if ln.iri]
    labels = labels_of(backend, iris, graphs)
    parents = _parents_of(backend, iris, graphs)
    for ln in lines:
        if ln.iri:
            ln.curie = backend.ws.compact(ln.iri)
            ln.label = labels.get(ln.iri)
            ln.parents = len(parents.get(ln.iri, []))
    return lines


def format_tree(lines: list[TreeLine]) -> str:
    """The tree as indented text, two spaces a level."""
    out = []
    for ln in lines:
        pad = "  " * ln.depth
        if ln.mark == "more":
            out.append(f"{pad}… {ln.more} more")
            continue
        text = f"{pad}{ln.label}  {ln.curie}" if ln.label else f"{pad}{ln.curie}"
        notes = []
        if ln.mark == "cycle":
            notes.append("cycle: an ancestor of itself, not followed")
        else:
            if ln.below:
                notes.append(f"{ln.below} below")
            if ln.parents > 1:
                notes.append(f"{ln.parents} parents")
            if ln.mark == "repeat":
                notes.append("shown above")
        if notes:
            text += "  (" + "; ".join(notes) + ")"
        out.append(text)
    return "\n".join(out) + "\n"


def format_matches(matches: list[Match]) -> str:
    return "".join(_describe(m) + "\n" for m in matches)

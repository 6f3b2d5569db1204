"""Templates: SPARQL files with typed parameters, bound safely.

A template is a ``.rq`` file: built-in ones in ``kgkit/queries/``, a workspace's
own in its ``queries/`` folder (a workspace file of the same name wins). It starts
with a header of ``#:`` lines, then the query::

    #: about   Everything below a root, with its depth.
    #: param   root iri -- the entity at the top
    #: param   max_depth integer? -- at most this many links below the root
    #: param   links predicates = @parent -- links followed from child to parent
    #: walk    ?parent -> ?item from root up to max_depth
    SELECT ?parent ?item WHERE { ?parent %{links}* ?root . ?item %{links} ?parent }

Header lines:

``#: about TEXT``
    the summary (several lines join with a space).
``#: param NAME KIND[?] [= DEFAULT] [one of A,B,...] [-- HELP]``
    a parameter. ``KIND`` is ``iri``, ``literal``, ``language``, ``integer`` or
    ``predicates``. ``?`` makes it optional with no default (left unbound). A
    default starting with ``@`` names a profile role (``@parent``) for
    ``predicates``, and ``@language`` is the workspace's first language. A
    ``language`` value ``@untagged`` asks for literals without a language tag.
``#: walk ?FROM -> ?TO from PARAM [up to PARAM]``
    the query returns hierarchy links; kgkit walks them breadth first from the
    value of ``PARAM`` and returns ``?TO`` (renamed ``?item``) with ``?depth``, the
    fewest links from the start, sorted by depth then item.

Binding: values are parsed by kind into pyoxigraph terms (an ``iri`` must be a
CURIE or ``<IRI>``, an ``integer`` an integer...) and reach the query only as a
one-row ``VALUES`` block, serialised by pyoxigraph, placed at the start of every
``WHERE`` group (or, when the query has ``%{bind}`` slots, exactly there), so
they bind ``?NAME``. ``predicates`` parameters fill the
``%{NAME}`` slots as a property-path alternative of IRIs, ``(<a>|<b>)`` (and
``%{NAME:list}`` slots as ``<a>, <b>``, for ``IN (...)``): a VALUES
list of predicates is many times slower in pyoxigraph, and so are
``substitutions=`` on path queries (see DEVELOPERS.md, "Measured facts"). No
value is ever pasted into the text as written.

Graph settings (``graphs:`` in ``kgkit.yaml``): a profile role reads as the union of
the predicates the queried graphs map it to, and a ``language`` value also takes the
untagged literals when a queried graph reads its untagged literals in that language
(the VALUES block then has a second row with the untagged value).
"""

from __future__ import annotations

import os
import re
from collections import deque
from collections.abc import Iterator
from dataclasses import dataclass, field
from importlib import resources

import pyoxigraph as ox

from kgkit.errors import KgkitError, ParameterError, TemplateError, WorkspaceError
from kgkit.inputs import check_text, file_error, parse_int, read_text_file
from kgkit.languages import is_language_tag
from kgkit.query import Backend, QueryResult, run_query, tokenize
from kgkit.workspace import PROFILE_ROLES, Profile, Workspace

__all__ = [
    "KINDS",
    "UNTAGGED",
    "Param",
    "Template",
    "bind_template",
    "list_templates",
    "load_template",
    "parse_template",
    "parse_value",
    "read_graphs",
    "run_template",
    "walk_links",
]

KINDS = ("iri", "literal", "language", "integer", "predicates")
#: the ``language`` value asking for untagged literals (langMatches(lang(?l), "") holds
#: exactly for them)
UNTAGGED = "@untagged"
XSD_INTEGER = ox.NamedNode("http://www.w3.org/2001/XMLSchema#integer")
#: marks where the VALUES block goes, when the start of every WHERE group is not right
BIND_SLOT = "%{bind}"
#: fills an empty predicate list: no statement uses it, so the pattern matches nothing
NO_PREDICATE = "http://kgkit.invalid/ns#noPredicate"

_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*$")
_PARAM = re.compile(
    r"^(?P<name>[A-Za-z_][A-Za-z0-9_]*)\s+(?P<kind>[a-z]+)(?P<opt>\?)?"
    r"(?:\s*=\s*(?P<default>\S+))?"
    r"(?:\s+one\s+of\s+(?P<choices>\S+))?"
    r"\s*(?:--\s*(?P<help>.*))?$"
)
_WALK = re.compile(
    r"^\?(?P<src>[A-Za-z_]\w*)\s*->\s*\?(?P<dst>[A-Za-z_]\w*)\s+from\s+(?P<start>[A-Za-z_]\w*)"
    r"(?:\s+up\s+to\s+(?P<limit>[A-Za-z_]\w*))?\s*$"
)


@dataclass(frozen=True)
class Param:
    name: str
    kind: str
    default: str | None = None
    optional: bool = False
    help: str = ""
    choices: tuple[str, ...] = ()

    @property
    def required(self) -> bool:
        return self.default is None and not self.optional


@dataclass(frozen=True)
class Walk:
    src: str
    dst: str
    start: str
    limit: str | None


@dataclass(frozen=True)
class Template:
    name: str
    path: str
    summary: str
    params: tuple[Param, ...]
    body: str  # the query text after the header
    body_line: int  # line number of the body's first line in the file
    walk: Walk | None = None
    builtin: bool = True
    variables: tuple[str, ...] = field(default=())

    def param(self, name: str) -> Param | None:
        return next((p for p in self.params if p.name == name), None)


def parse_template(text: str, name: str, path: str = "", builtin: bool = False) -> Template:
    """Parse a template file's text. Raises :class:`TemplateError` naming file and line."""
    where = path or name
    summary: list[str] = []
    params: list[Param] = []
    walk = None
    lines = text.splitlines()
    i = 0
    for i, line in enumerate(lines):
        stripped = line.strip()
        if not stripped:
            continue
        if not stripped.startswith("#:"):
            if stripped.startswith("#"):
                continue
            break
        head = stripped[2:].strip()
        word, _, rest = head.partition(" ")
        rest = rest.strip()
        at = f"{where}:{i + 1}"
        if word == "about":
            summary.append(rest)
        elif word == "param":
            m = _PARAM.match(rest)
            if not m:
                raise TemplateError(
                    f"{at}: malformed parameter; write "
                    "'#: param NAME KIND[?] [= DEFAULT] [one of A,B] [-- HELP]'"
                )
            kind = m.group("kind")
            if kind not in KINDS:
                raise TemplateError(f"{at}: unknown kind {kind!r} (kinds: {', '.join(KINDS)})")
            if any(p.name == m.group("name") for p in params):
                raise TemplateError(f"{at}: parameter {m.group('name')!r} declared twice")
            default = m.group("default")
            if default and default.startswith("@"):
                role = default[1:]
                ok = (kind == "predicates" and role in PROFILE_ROLES) or (
                    kind == "language" and role == "language"
                )
                if not ok:
                    raise TemplateError(f"{at}: default {default!r} does not fit kind {kind}")
            choices = tuple(c for c in (m.group("choices") or "").split(",") if c)
            if default and not default.startswith("@"):
                # a default that can never bind is the template's fault: say so at load
                if choices and default not in choices:
                    raise TemplateError(f"{at}: default {default!r} is not one of its choices")
                if kind == "integer":
                    parse_int(default, f"{at}: default", error=TemplateError)
            params.append(
                Param(
                    name=m.group("name"),
                    kind=kind,
                    default=default,
                    optional=bool(m.group("opt")),
                    help=(m.group("help") or "").strip(),
                    choices=choices,
                )
            )
        elif word == "walk":
            m = _WALK.match(rest)
            if not m:
                raise TemplateError(
                    f"{at}: malformed walk; write '#: walk ?FROM -> ?TO from PARAM'"
                )
            walk = Walk(m.group("src"), m.group("dst"), m.group("start"), m.group("limit"))
        else:
            raise TemplateError(f"{at}: unknown header line {word!r} (about, param, walk)")
    else:
        i = len(lines)
    body = "\n".join(lines[i:]) + "\n"
    if not body.strip():
        raise TemplateError(f"{where}: no query after the header")
    tpl = Template(
        name=name,
        path=path,
        summary=" ".join(summary),
        params=tuple(params),
        body=body,
        body_line=i + 1,
        walk=walk,
        builtin=builtin,
    )
    _check_usage(tpl, where)
    return tpl


def _check_usage(tpl: Template, where: str) -> None:
    vars_used = set()
    slots_used = set()
    where_seen = False
    for tok in tokenize(tpl.body):
        if tok.kind == "var":
            vars_used.add(tok.text[1:])
        elif tok.kind == "slot" and tok.text == BIND_SLOT:
            where_seen = True
        elif tok.kind == "slot":
            slots_used.add(tok.text[2:-1].split(":")[0])
        elif tok.kind == "word" and tok.text.upper() in ("WHERE", "ASK"):
            where_seen = True
    walk_limit = tpl.walk.limit if tpl.walk else None
    for p in tpl.params:
        if p.name == walk_limit:
            continue
        if p.kind == "predicates":
            if p.name not in slots_used:
                raise TemplateError(f"{where}: parameter {p.name!r} has no %{{{p.name}}} slot")
        elif p.name not in vars_used:
            raise TemplateError(f"{where}: parameter {p.name!r} is not used as ?{p.name}")
    declared = {p.name for p in tpl.params if p.kind == "predicates"}
    for slot in sorted(slots_used - declared):
        raise TemplateError(f"{where}: slot %{{{slot}}} is not a declared predicates parameter")
    if tpl.params and not where_seen:
        raise TemplateError(f"{where}: the query needs a WHERE group to bind parameters in")
    if tpl.param("bind"):
        raise TemplateError(f"{where}: 'bind' is reserved for the %{{bind}} slot")
    if tpl.walk:
        w = tpl.walk
        for v in (w.src, w.dst):
            if v not in vars_used:
                raise TemplateError(f"{where}: walk variable ?{v} is not in the query")
        for pname in filter(None, (w.start, w.limit)):
            if tpl.param(pname) is None:
                raise TemplateError(f"{where}: walk names {pname!r}, which is not a parameter")
        if tpl.param(w.start).kind != "iri":
            raise TemplateError(f"{where}: walk starts from {w.start!r}, which must be an iri")
        if w.limit and tpl.param(w.limit).kind != "integer":
            raise TemplateError(f"{where}: walk limit {w.limit!r} must be an integer parameter")


# ---------------------------------------------------------------------------
# Discovery


def _builtin_dir():
    return resources.files("kgkit") / "queries"


def _sources(ws: Workspace | None) -> dict[str, tuple[str, str, bool]]:
    """name -> (path, text, builtin); workspace files win over built-in ones."""
    out: dict[str, tuple[str, str, bool]] = {}
    for entry in sorted(_builtin_dir().iterdir(), key=lambda e: e.name):
        if entry.name.endswith(".rq"):
            out[entry.name[:-3]] = (str(entry), entry.read_text("utf-8"), True)
    if ws is not None and os.path.lexists(ws.queries_dir):
        # an unreadable folder is an error, never a silent fall-back to the built-ins
        try:
            names = sorted(e.name for e in os.scandir(ws.queries_dir) if e.name.endswith(".rq"))
        except OSError as exc:
            raise file_error(ws.queries_dir, exc, "list", TemplateError) from None
        for fname in names:
            path = ws.queries_dir / fname
            text = read_text_file(path, "a template", TemplateError)
            out[path.stem] = (str(path), text, False)
    return out


def list_templates(ws: Workspace | None) -> list[Template]:
    """Every template the workspace can run, sorted by name."""
    return [
        parse_template(text, name, path, builtin)
        for name, (path, text, builtin) in sorted(_sources(ws).items())
    ]


def load_template(ws: Workspace | None, name: str) -> Template:
    """The template called ``name`` (workspace first, then built-in)."""
    sources = _sources(ws)
    if name not in sources:
        raise TemplateError(f"no template named {name!r} (templates: {', '.join(sorted(sources))})")
    path, text, builtin = sources[name]
    return parse_template(text, name, path, builtin)


# ---------------------------------------------------------------------------
# Values


def parse_value(
    param: Param, raw: str, ws: Workspace, profile: Profile | None = None
) -> ox.NamedNode | ox.Literal | list[str]:
    """Parse one parameter value by its kind; :class:`ParameterError` if it is not one.

    ``@role`` values of ``predicates`` read ``profile`` (default: the workspace's).
    """
    what = f"parameter {param.name!r} ({param.kind})"
    raw = check_text(raw, what, ParameterError).strip()
    if param.choices and raw not in param.choices:
        raise ParameterError(f"{what}: {raw!r} is not one of {', '.join(param.choices)}")
    if param.kind == "iri":
        return _iri(raw, ws, what)
    if param.kind == "literal":
        return ox.Literal(raw)
    if param.kind == "language":
        if raw == "@language":
            raw = ws.config.languages[0] if ws.config.languages else "en"
        if raw == UNTAGGED:
            return ox.Literal("")
        if not is_language_tag(raw):
            raise ParameterError(
                f"{what}: {raw!r} is not a BCP 47 language tag such as en or de "
                f"(or {UNTAGGED} for literals without one)"
            )
        return ox.Literal(raw.lower())
    if param.kind == "integer":
        if not re.fullmatch(r"[+-]?[0-9]+", raw):
            raise ParameterError(f"{what}: {raw!r} is not an integer")
        return ox.Literal(str(parse_int(raw, what, error=ParameterError)), datatype=XSD_INTEGER)
    # predicates: a comma-separated list of CURIEs / IRIs, or @role
    out: list[str] = []
    for part in (p.strip() for p in raw.split(",")):
        if not part:
            continue
        if part.startswith("@"):
            role = part[1:]
            if role not in PROFILE_ROLES:
                raise ParameterError(
                    f"{what}: unknown profile role {part!r} (roles: {', '.join(PROFILE_ROLES)})"
                )
            out.extend((profile or ws.profile)[role])
        else:
            out.append(_iri(part, ws, what).value)
    return list(dict.fromkeys(out))


def _iri(raw: str, ws: Workspace, what: str) -> ox.NamedNode:
    try:
        iri = ws.expand(raw, what)
    except WorkspaceError as exc:
        raise ParameterError(str(exc)) from None
    try:
        return ox.NamedNode(iri)
    except ValueError as exc:
        raise ParameterError(f"{what}: {raw!r} is not a valid IRI ({exc})") from None


def _values(
    tpl: Template, raw: dict[str, str], ws: Workspace, profile: Profile | None = None
) -> dict[str, object]:
    unknown = sorted(set(raw) - {p.name for p in tpl.params})
    if unknown:
        names = ", ".join(p.name for p in tpl.params) or "none"
        raise ParameterError(
            f"template {tpl.name!r} has no parameter {unknown[0]!r} (parameters: {names})"
        )
    out: dict[str, object] = {}
    for p in tpl.params:
        if p.name in raw:
            out[p.name] = parse_value(p, str(raw[p.name]), ws, profile)
        elif p.default is not None:
            out[p.name] = parse_value(p, p.default, ws, profile)
        elif p.optional:
            out[p.name] = None
        else:
            raise ParameterError(
                f"template {tpl.name!r} needs parameter {p.name!r} ({p.kind}); "
                f"give -p {p.name}=VALUE"
            )
    return out


def _path(iris: list[str], as_list: bool = False) -> str:
    iris = iris or [NO_PREDICATE]
    terms = [str(ox.NamedNode(i)) for i in iris]
    if as_list:
        return ", ".join(terms)
    return terms[0] if len(terms) == 1 else "(" + "|".join(terms) + ")"


def _rows(bound: list[Param], values: dict, ws: Workspace, graphs) -> list[tuple]:
    """The VALUES rows: one, plus one per untagged alternative of a language value.

    A ``language`` value L also takes the untagged literals when one of ``graphs``
    reads its untagged literals as a language within L (``graphs:`` in ``kgkit.yaml``).
    """
    from kgkit.vocab.aliases import lang_matches  # RFC 4647 basic filtering, one home

    untagged = {ws.untagged_language(g) for g in graphs or ()} - {None}
    rows = [()]
    for p in bound:
        v = values[p.name]
        alts = [v]
        if (
            p.kind == "language"
            and v is not None
            and v.value
            and any(lang_matches(u, [v.value]) for u in untagged)
        ):
            alts.append(ox.Literal(""))
        rows = [(*r, a) for r in rows for a in alts]
    return rows


def bind_template(
    tpl: Template, raw: dict[str, str], ws: Workspace, graphs: list[str] | None = None
) -> tuple[str, dict]:
    """The query text with the parameters bound, and the parsed values.

    ``graphs``: the names of the graphs the query will read, whose settings
    (``graphs:`` in ``kgkit.yaml``) change what profile roles and languages mean.

    >>> from pathlib import Path
    >>> from kgkit.workspace import Config
    >>> ws = Workspace(Path("/tmp/w"), Config.default())
    >>> t = parse_template("#: param x iri\\nSELECT ?x WHERE { ?x ?p ?o }", "t")
    >>> print(bind_template(t, {"x": "<http://example.org/a>"}, ws)[0], end="")
    SELECT ?x WHERE { VALUES (?x) { (<http://example.org/a>) } ?x ?p ?o }
    """
    values = _values(tpl, raw, ws, ws.profile_over(graphs or ()))
    used = {t.text[1:] for t in tokenize(tpl.body) if t.kind == "var"}
    bound = [p for p in tpl.params if p.kind != "predicates" and p.name in used]
    if bound:
        head = " ".join(f"?{p.name}" for p in bound)
        cells = " ".join(
            "(" + " ".join("UNDEF" if v is None else str(v) for v in row) + ")"
            for row in _rows(bound, values, ws, graphs)
        )
        block = f" VALUES ({head}) {{ {cells} }}"
    else:
        block = ""
    pieces: list[str] = []
    pos = 0
    after_where = False
    text = tpl.body
    tokens = list(tokenize(text))
    explicit = any(t.text == BIND_SLOT for t in tokens)
    for tok in tokens:
        if tok.text == BIND_SLOT:
            pieces.append(text[pos : tok.start])
            pieces.append(block)
            pos = tok.start + len(tok.text)
        elif tok.kind == "slot":
            pieces.append(text[pos : tok.start])
            slot, _, form = tok.text[2:-1].partition(":")
            pieces.append(_path(values[slot], as_list=form == "list"))
            pos = tok.start + len(tok.text)
        elif tok.kind == "word" and tok.text.upper() in ("WHERE", "ASK") and not explicit:
            after_where = True
        elif after_where and tok.text == "{":
            after_where = False
            if block:
                pieces.append(text[pos : tok.start + 1])
                pieces.append(block)
                pos = tok.start + 1
    pieces.append(text[pos:])
    return "".join(pieces), values


# ---------------------------------------------------------------------------
# Running


def read_graphs(backend: Backend, graphs: list[str] | None) -> list[str]:
    """The names of the graphs a query over ``graphs`` reads (``None``: every graph)."""
    if graphs is not None:
        return list(graphs)
    return sorted(set((getattr(backend, "graph_names", None) or {}).values()))


def walk_links(
    links: Iterator[tuple], start: ox.NamedNode, limit: int | None = None
) -> list[tuple[ox.NamedNode, int]]:
    """Breadth-first walk of ``(from, to)`` links from ``start``.

    Returns ``(node, depth)`` for every node reached (the start excluded), with
    the fewest links from the start, sorted by depth then IRI. Cycles end the walk
    where they close.

    >>> n = ox.NamedNode
    >>> walk_links([(n("http://e/a"), n("http://e/b")), (n("http://e/b"), n("http://e/a"))],
    ...            n("http://e/a"))
    [(<NamedNode value=http://e/b>, 1)]
    """
    nexts: dict = {}
    for src, dst in links:
        if src is None or dst is None:
            continue
        nexts.setdefault(src, []).append(dst)
    depth = {start: 0}
    queue = deque([start])
    while queue:
        node = queue.popleft()
        d = depth[node]
        if limit is not None and d >= limit:
            continue
        for nxt in nexts.get(node, ()):
            if nxt not in depth:
                depth[nxt] = d + 1
                queue.append(nxt)
    del depth[start]
    return sorted(depth.items(), key=lambda kv: (kv[1], str(kv[0])))


def run_template(
    backend: Backend,
    name: str,
    params: dict[str, str] | None = None,
    graphs: list[str] | None = None,
    allow_service: bool = False,
) -> QueryResult:
    """Run a template by name with raw parameter values (``{"root": "ex:water-sports"}``)."""
    tpl = load_template(backend.ws, name)
    text, values = bind_template(tpl, params or {}, backend.ws, read_graphs(backend, graphs))
    try:
        res = run_query(backend, text, graphs=graphs, allow_service=allow_service)
    except KgkitError as exc:
        exc.args = (f"template {tpl.path}: {exc}",)  # same class, details and parameters
        raise
    if tpl.walk is None:
        return res
    w = tpl.walk
    if res.kind != "select" or w.src not in res.variables or w.dst not in res.variables:
        raise TemplateError(f"{tpl.path}: a walk template must SELECT ?{w.src} and ?{w.dst}")
    i, j = res.variables.index(w.src), res.variables.index(w.dst)
    limit = values.get(w.limit) if w.limit else None
    limit_n = int(limit.value) if limit is not None else None
    if limit_n is not None and limit_n < 0:
        raise ParameterError(f"parameter {w.limit!r} must not be negative")
    reached = walk_links(((r[i], r[j]) for r in res.rows), values[w.start], limit_n)
    depths: dict[int, ox.Literal] = {}
    rows = (
        (node, depths.get(d) or depths.setdefault(d, ox.Literal(str(d), datatype=XSD_INTEGER)))
        for node, d in reached
    )
    return QueryResult(kind="select", variables=["item", "depth"], rows=iter(rows))

"""Workspaces: finding and reading ``kgkit.yaml``, prefixes and the profile.

A workspace is a folder holding ``kgkit.yaml``, ``queries/`` and ``vocab/``. The
profile says which predicates of the knowledge graph mean label, alias, parent and
so on, so that templates and the compiler never hard-code a predicate.

>>> ws = Workspace(Path("/tmp/w"), Config.default())
>>> ws.expand("skos:broader")
'http://www.w3.org/2004/02/skos/core#broader'
>>> ws.compact("http://www.w3.org/2004/02/skos/core#broader")
'skos:broader'
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path

from kgkit.errors import ArgumentError, WorkspaceError, one_line
from kgkit.files import write_text_atomic
from kgkit.inputs import read_yaml
from kgkit.languages import is_language_tag

__all__ = [
    "CONFIG_NAME",
    "PROFILE_ROLES",
    "Config",
    "GraphSettings",
    "Profile",
    "Workspace",
    "find_workspace",
    "init_workspace",
    "load_workspace",
]

CONFIG_NAME = "kgkit.yaml"

DEFAULT_PREFIXES = {
    "rdf": "http://www.w3.org/1999/02/22-rdf-syntax-ns#",
    "rdfs": "http://www.w3.org/2000/01/rdf-schema#",
    "owl": "http://www.w3.org/2002/07/owl#",
    "skos": "http://www.w3.org/2004/02/skos/core#",
    "xsd": "http://www.w3.org/2001/XMLSchema#",
    "dct": "http://purl.org/dc/terms/",
}

# role -> default predicates (CURIEs over DEFAULT_PREFIXES), in order of preference
DEFAULT_PROFILE = {
    "label": ["skos:prefLabel", "rdfs:label"],
    "alias": ["skos:altLabel"],
    "hidden_label": ["skos:hiddenLabel"],
    "description": ["skos:definition", "rdfs:comment"],
    "parent": ["skos:broader", "rdfs:subClassOf"],
    "type": ["rdf:type"],
    "same_as": ["owl:sameAs"],
    "notation": ["skos:notation"],
}
PROFILE_ROLES = tuple(DEFAULT_PROFILE)

CONFIG_KEYS = ("store", "prefixes", "profile", "languages", "endpoint", "graphs")
GRAPH_KEYS = ("profile", "untagged_language")

_PREFIX_NAME = re.compile(r"^[A-Za-z][A-Za-z0-9_.-]*$|^$")
_CURIE = re.compile(r"^([A-Za-z][A-Za-z0-9_.-]*)?:(\S*)$")
# what an IRI never holds (RDF 1.1 N-Triples, IRIREF): controls, space, <>"{}|^`\
_NOT_IN_IRI = re.compile(r'[\x00-\x20<>"{}|^`\\]')

CONFIG_TEMPLATE = """\
# kgkit workspace settings. Every command run inside this folder (or below it)
# uses this file; `--workspace DIR` points at another one.

# Where the embedded RDF store lives, relative to this file.
store: {store}

# Prefixes used to read CURIEs (skos:broader) in this file, in templates and
# vocabulary specs, and to shorten IRIs in command output.
prefixes:
{prefixes}

# The profile: which predicates of your knowledge graph mean what. Each role
# takes a list, most preferred first. Map your own graph's predicates here;
# templates and the compiler read them from this list, never from the query.
#   label         preferred names              alias        other names
#   hidden_label  names to match but not show  description  short definitions
#   parent        "is a" / "part of" links     type         class membership
#   same_as       same-as and redirect links   notation     codes
profile:
{profile}

# Languages of labels to keep by default (BCP 47 tags; "en" also matches "en-GB").
languages: [{languages}]

# A SPARQL 1.1 endpoint to query instead of the embedded store, for a graph
# that has outgrown one machine. Leave null to use the store.
endpoint: null

# Settings of single graphs, by graph name: roles the graph maps to its own
# predicates (the profile above gives the rest) and the language its untagged
# labels are read as (the stored statements stay as the dump had them), e.g.
#   graphs:
#     trades:
#       untagged_language: en
#       profile: {{label: [rdfs:label], alias: []}}
"""


@dataclass(frozen=True)
class Profile:
    """Predicate IRIs by role, most preferred first."""

    roles: dict[str, tuple[str, ...]]

    def __getitem__(self, role: str) -> tuple[str, ...]:
        return self.roles[role]

    def all_predicates(self) -> frozenset[str]:
        """Every predicate IRI the profile names, whatever its role."""
        return frozenset(p for preds in self.roles.values() for p in preds)

    def with_roles(self, roles: dict[str, tuple[str, ...]]) -> Profile:
        """This profile with the given roles replaced (a graph's own mapping)."""
        if not roles:
            return self
        return Profile({**self.roles, **roles})


@dataclass(frozen=True)
class GraphSettings:
    """The settings of one graph (``graphs: NAME:`` in ``kgkit.yaml``).

    ``roles`` holds only the profile roles the graph maps itself; the others come
    from the workspace profile. ``untagged_language`` is the language the graph's
    untagged literals are read as (the stored statements stay untagged).
    """

    roles: dict[str, tuple[str, ...]] = field(default_factory=dict)
    untagged_language: str | None = None


@dataclass(frozen=True)
class Config:
    """The parsed contents of ``kgkit.yaml``."""

    store: str = ".kgkit/store"
    prefixes: dict[str, str] = field(default_factory=lambda: dict(DEFAULT_PREFIXES))
    profile: Profile = field(
        default_factory=lambda: Profile(
            {
                r: tuple(_expand(c, DEFAULT_PREFIXES, "profile") for c in cs)
                for r, cs in DEFAULT_PROFILE.items()
            }
        )
    )
    languages: tuple[str, ...] = ("en",)
    endpoint: str | None = None
    graphs: dict[str, GraphSettings] = field(default_factory=dict)

    @classmethod
    def default(cls) -> Config:
        return cls()


def _expand(term: str, prefixes: dict[str, str], where: str) -> str:
    """Expand ``<iri>`` or ``prefix:local`` to a full IRI."""
    term = term.strip()
    if term.startswith("<") and term.endswith(">"):
        iri = term[1:-1]
        if not iri or _NOT_IN_IRI.search(iri):
            raise WorkspaceError(f"{where}: {term!r} is not a valid IRI")
        return iri
    m = _CURIE.match(term)
    if m and (m.group(1) or "") in prefixes:
        bad = _NOT_IN_IRI.search(m.group(2))
        if bad:
            raise WorkspaceError(
                f"{where}: {term!r}: the character {bad.group()!r} cannot be part of an IRI"
            )
        return prefixes[m.group(1) or ""] + m.group(2)
    if re.match(r"^[a-zA-Z][a-zA-Z0-9+.-]*:[^\s<>\"]+$", term) and (
        "/" in term or term.startswith("urn:")
    ):
        return term
    raise WorkspaceError(f"{where}: {term!r} is neither an IRI in <...> nor a known CURIE")


class Workspace:
    """An opened workspace: its folder and its parsed settings."""

    def __init__(self, root: Path, config: Config):
        self.root = Path(root)
        self.config = config

    @property
    def store_path(self) -> Path:
        return (self.root / self.config.store).resolve()

    @property
    def queries_dir(self) -> Path:
        return self.root / "queries"

    @property
    def vocab_dir(self) -> Path:
        return self.root / "vocab"

    @property
    def prefixes(self) -> dict[str, str]:
        return self.config.prefixes

    @property
    def profile(self) -> Profile:
        return self.config.profile

    def profile_for(self, graph: str) -> Profile:
        """The profile ``graph`` is read with: its own roles, the workspace's for the rest."""
        gs = self.config.graphs.get(graph)
        return self.config.profile.with_roles(gs.roles) if gs else self.config.profile

    def untagged_language(self, graph: str) -> str | None:
        """The language untagged literals of ``graph`` are read as (None: untagged)."""
        gs = self.config.graphs.get(graph)
        return gs.untagged_language if gs else None

    def profile_over(self, graphs: Iterable[str]) -> Profile:
        """What a query over several graphs reads each role as: role by role, the
        predicates of every graph's profile (the workspace profile's first).

        >>> ws = Workspace(Path("/tmp/w"), Config.default())
        >>> ws.profile_over(["a", "b"]) == ws.profile
        True
        """
        own = [self.config.graphs[g].roles for g in sorted(set(graphs)) if g in self.config.graphs]
        if not any(own):
            return self.config.profile
        roles = {}
        for role, preds in self.config.profile.roles.items():
            merged = dict.fromkeys(preds)
            for r in own:
                merged.update(dict.fromkeys(r.get(role, ())))
            roles[role] = tuple(merged)
        return Profile(roles)

    def expand(self, term: str, where: str = "term") -> str:
        """Expand a CURIE or ``<IRI>`` with the workspace prefixes."""
        return _expand(term, self.prefixes, where)

    def compact(self, iri: str) -> str:
        """Shorten an IRI to a CURIE with the longest matching prefix, if any."""
        best = None
        for name, ns in self.prefixes.items():
            if iri.startswith(ns) and (best is None or len(ns) > len(best[1])):
                local = iri[len(ns) :]
                if re.fullmatch(r"[A-Za-z0-9_][A-Za-z0-9_.-]*|", local) and not local.endswith("."):
                    best = (name, ns)
        if best is None:
            return f"<{iri}>"
        return f"{best[0]}:{iri[len(best[1]) :]}"


def _parse_config(data: object, path: Path) -> Config:
    if data is None:
        data = {}
    if not isinstance(data, dict):
        raise WorkspaceError(f"{path}: expected a mapping of settings at the top level")
    for key in data:
        if key not in CONFIG_KEYS:
            raise WorkspaceError(f"{path}: unknown key {key!r} (known: {', '.join(CONFIG_KEYS)})")
    store = data.get("store", ".kgkit/store")
    if not isinstance(store, str) or not store.strip():
        raise WorkspaceError(f"{path}: key 'store' must be a folder path")

    prefixes = dict(DEFAULT_PREFIXES)
    raw_prefixes = data.get("prefixes", {}) or {}
    if not isinstance(raw_prefixes, dict):
        raise WorkspaceError(f"{path}: key 'prefixes' must map prefix names to namespace IRIs")
    for name, ns in raw_prefixes.items():
        name = "" if name is None else str(name)
        if not _PREFIX_NAME.match(name):
            raise WorkspaceError(f"{path}: key 'prefixes.{name}' is not a valid prefix name")
        if not isinstance(ns, str) or not re.match(r"^[a-zA-Z][a-zA-Z0-9+.-]*:\S+$", ns):
            raise WorkspaceError(f"{path}: key 'prefixes.{name}' must be a namespace IRI")
        prefixes[name] = ns

    raw_profile = data.get("profile", {}) or {}
    if not isinstance(raw_profile, dict):
        raise WorkspaceError(f"{path}: key 'profile' must map roles to lists of predicates")
    roles: dict[str, tuple[str, ...]] = {}
    for role in raw_profile:
        if role not in DEFAULT_PROFILE:
            raise WorkspaceError(
                f"{path}: unknown key 'profile.{role}' (roles: {', '.join(PROFILE_ROLES)})"
            )
    for role, default in DEFAULT_PROFILE.items():
        value = raw_profile.get(role, default)
        if isinstance(value, str):
            value = [value]
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise WorkspaceError(f"{path}: key 'profile.{role}' must be a list of predicates")
        roles[role] = tuple(_expand(v, prefixes, f"{path}: key 'profile.{role}'") for v in value)

    languages = data.get("languages", ["en"])
    if isinstance(languages, str):
        languages = [x.strip() for x in languages.split(",")]
    if not isinstance(languages, list) or not all(is_language_tag(x) for x in languages):
        raise WorkspaceError(f"{path}: key 'languages' must be a list of BCP 47 language tags")

    endpoint = data.get("endpoint")
    if endpoint is not None and (
        not isinstance(endpoint, str) or not re.match(r"^https?://\S+$", endpoint)
    ):
        raise WorkspaceError(f"{path}: key 'endpoint' must be an http(s) URL or null")

    return Config(
        store=store,
        prefixes=prefixes,
        profile=Profile(roles),
        languages=tuple(x.lower() for x in languages),
        endpoint=endpoint,
        graphs=_parse_graphs(data.get("graphs"), prefixes, path),
    )


def _parse_graphs(raw: object, prefixes: dict[str, str], path: Path) -> dict[str, GraphSettings]:
    """``graphs:``: graph name -> its own profile roles and untagged language."""
    from kgkit.store import is_valid_graph_name

    if raw is None:
        return {}
    if not isinstance(raw, dict):
        raise WorkspaceError(f"{path}: key 'graphs' must map graph names to their settings")
    out: dict[str, GraphSettings] = {}
    for name, settings in raw.items():
        name = str(name)
        where = f"{path}: key 'graphs.{name}"
        if not is_valid_graph_name(name):
            raise WorkspaceError(
                f"{where}' is not a graph name (letters, digits, '.', '_' and '-')"
            )
        settings = settings or {}
        if not isinstance(settings, dict):
            raise WorkspaceError(f"{where}' must be a mapping (keys: {', '.join(GRAPH_KEYS)})")
        for key in settings:
            if key not in GRAPH_KEYS:
                raise WorkspaceError(f"{where}.{key}' is unknown (known: {', '.join(GRAPH_KEYS)})")
        raw_profile = settings.get("profile") or {}
        if not isinstance(raw_profile, dict):
            raise WorkspaceError(f"{where}.profile' must map roles to lists of predicates")
        roles: dict[str, tuple[str, ...]] = {}
        for role, value in raw_profile.items():
            if role not in DEFAULT_PROFILE:
                raise WorkspaceError(
                    f"{where}.profile.{role}' is not a role (roles: {', '.join(PROFILE_ROLES)})"
                )
            if isinstance(value, str):
                value = [value]
            if value is None:
                value = []
            if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
                raise WorkspaceError(f"{where}.profile.{role}' must be a list of predicates")
            roles[role] = tuple(_expand(v, prefixes, f"{where}.profile.{role}'") for v in value)
        lang = settings.get("untagged_language")
        if lang is not None and (not is_language_tag(lang)):
            raise WorkspaceError(
                f"{where}.untagged_language' must be a BCP 47 language tag such as en"
            )
        out[name] = GraphSettings(roles, lang.lower() if lang else None)
    return out


def load_workspace(root: Path | str) -> Workspace:
    """Read the workspace whose ``kgkit.yaml`` is in ``root``."""
    root = Path(root)
    path = root / CONFIG_NAME
    if not os.path.lexists(path):
        raise WorkspaceError(
            f"{one_line(str(root))}: no {CONFIG_NAME} here; run `kgkit init` to make one"
        )
    data = read_yaml(path, "the workspace settings", WorkspaceError).data
    return Workspace(root.resolve(), _parse_config(data, path))


def find_workspace(start: Path | str | None = None) -> Workspace:
    """Find the workspace in ``start`` (default: the current folder) or above it."""
    here = Path(start or os.getcwd()).resolve()
    for folder in (here, *here.parents):
        if (folder / CONFIG_NAME).is_file():
            return load_workspace(folder)
    raise WorkspaceError(
        f"no {CONFIG_NAME} in {one_line(str(here))} or any folder above it; "
        "run `kgkit init` or give workspace=DIR",
        params=("workspace",),
    )


def init_workspace(root: Path | str, languages: tuple[str, ...] = ("en",)) -> Workspace:
    """Create a workspace in ``root``: ``kgkit.yaml``, ``queries/``, ``vocab/``, the store.

    An existing ``kgkit.yaml`` is never overwritten.
    """
    from kgkit.store import create_store

    root = Path(root)
    path = root / CONFIG_NAME
    if os.path.lexists(path):
        raise WorkspaceError(f"{one_line(str(path))} already exists; not overwriting it")
    for tag in languages:  # checked before anything is written (no half-made workspace)
        if not is_language_tag(tag):
            raise ArgumentError("languages", f"{one_line(repr(tag))} is not a BCP 47 language tag")
    root.mkdir(parents=True, exist_ok=True)
    width = max(len(k) for k in DEFAULT_PREFIXES) + 1
    prefixes = "\n".join(f"  {k + ':':<{width}} {v}" for k, v in DEFAULT_PREFIXES.items())
    profile = "\n".join(f"  {k}: [{', '.join(v)}]" for k, v in DEFAULT_PROFILE.items())
    text = CONFIG_TEMPLATE.format(
        store=".kgkit/store",
        prefixes=prefixes,
        profile=profile,
        languages=", ".join(languages),
    )
    (root / "queries").mkdir(exist_ok=True)
    (root / "vocab").mkdir(exist_ok=True)
    write_text_atomic(path, text, "workspace file")
    ws = load_workspace(root)
    create_store(ws.store_path)
    return ws

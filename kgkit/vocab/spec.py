"""The vocabulary spec ``vocab/<name>.yaml``: its schema and its validation.

Every key is checked before any work starts; a bad key gives one line naming the
file, the line and the key (:class:`kgkit.errors.SpecError`). Every rule is
opt-in: a spec without rules prunes nothing.
"""

from __future__ import annotations

import math
import os
import re
from dataclasses import dataclass, field
from pathlib import Path

from kgkit.errors import KgkitError, SpecError, one_line
from kgkit.inputs import load_yaml, read_yaml
from kgkit.languages import is_language_tag
from kgkit.workspace import Workspace

__all__ = [
    "AMBIGUITY_POLICIES",
    "OUTPUTS",
    "AliasRules",
    "CommonWordRule",
    "LanguageRules",
    "PopularityRule",
    "PruneRules",
    "Selection",
    "VocabSpec",
    "load_spec",
    "parse_spec",
]

AMBIGUITY_POLICIES = ("keep", "drop", "preferred-only")
#: output name -> file written into the build folder (report.json/report.txt always)
OUTPUTS = {
    "jsonl": "topics.jsonl",
    "yaml": "topics.yaml",
    "skos": "skos.ttl",
    "lexicon": "lexicon.tsv",
}
TOP_KEYS = (
    "name",
    "title",
    "namespace",
    "scheme",
    "graphs",
    "select",
    "include",
    "exclude",
    "languages",
    "aliases",
    "prune",
    "curation",
    "outputs",
    "release",
)
_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,127}$")
#: Largest integer or number a rule takes (bounds prune and alias thresholds).
MAX_RULE_INT = 10**12


@dataclass(frozen=True)
class Selection:
    """One template run of ``select:``; its ``variable`` (default: the first) holds topics."""

    template: str
    params: dict[str, str]
    include_root: bool = False
    variable: str | None = None


@dataclass(frozen=True)
class LanguageRules:
    """``languages:``. ``None`` for required/optional means every language is kept."""

    required: tuple[str, ...] = ()
    optional: tuple[str, ...] | None = None
    fallback: tuple[str, ...] = ()
    missing: str = "keep"  # keep (flagged) | drop

    @property
    def kept(self) -> tuple[str, ...] | None:
        """Languages whose labels are kept, or None for all."""
        if self.optional is None and not self.required:
            return None
        return tuple(dict.fromkeys((*self.required, *(self.optional or ()))))


@dataclass(frozen=True)
class CommonWordRule:
    """``aliases.common_words``: names used this often in general text are listed
    (wordfreq's Zipf scale: 3 is once per million words); ``drop_aliases`` removes
    such aliases (never a preferred label)."""

    min_zipf: float
    drop_aliases: bool = False


@dataclass(frozen=True)
class AliasRules:
    """``aliases:``. Empty aliases and duplicates are always removed; the rest is opt-in."""

    ambiguous: str = "keep"
    min_length: int = 0
    drop_numeric: bool = False
    stop: tuple[str, ...] = ()
    hidden: bool = True
    inflected_forms: tuple[str, ...] = ()  # languages whose names get their plural forms
    common_words: CommonWordRule | None = None


@dataclass(frozen=True)
class PopularityRule:
    template: str
    params: dict[str, str]
    min: float
    variable: str | None = None


@dataclass(frozen=True)
class PruneRules:
    max_depth: int | None = None
    min_descendants: int | None = None
    min_instances: int | None = None
    min_popularity: PopularityRule | None = None
    stop_topics: tuple[str, ...] = ()  # source IRIs


@dataclass(frozen=True)
class VocabSpec:
    """A validated vocabulary spec."""

    path: Path
    name: str
    title: str
    namespace: str
    scheme: str
    graphs: tuple[str, ...] | None
    select: tuple[Selection, ...]
    include: tuple[str, ...] = ()
    exclude: tuple[str, ...] = ()
    languages: LanguageRules = field(default_factory=LanguageRules)
    aliases: AliasRules = field(default_factory=AliasRules)
    prune: PruneRules = field(default_factory=PruneRules)
    curation: Path | None = None
    outputs: tuple[str, ...] = tuple(OUTPUTS)
    #: ``release.max_topic_loss``: the share of the previous release's active topics a
    #: release may lose without a replacement (kgkit.release.gates, gate topic-loss)
    max_topic_loss: float = 0.1

    @property
    def build_dir(self) -> Path:
        """``<spec folder>/<name>/build``."""
        return self.path.parent / self.name / "build"


def _key_lines(text: str) -> dict[str, int]:
    """Dotted key path -> 1-based line, from the YAML node tree (for error messages)."""
    try:
        return load_yaml(text, "spec").lines
    except KgkitError:
        return {}


class _Checker:
    def __init__(self, path: Path, lines: dict[str, int]):
        self.path, self.lines = path, lines

    def fail(self, key: str, cause: str) -> SpecError:
        line = self.lines.get(key)
        while line is None and ("." in key or "[" in key):
            key_parent = re.sub(r"(\.[^.\[]*|\[\d+\])$", "", key)
            if key_parent == key:
                break
            key, line = key_parent, self.lines.get(key_parent)
        where = f"{self.path}:{line}" if line else str(self.path)
        return SpecError(f"{where}: key {key!r}: {cause}")

    def mapping(self, value, key: str, known: tuple[str, ...]) -> dict:
        if value is None:
            return {}
        if not isinstance(value, dict):
            raise self.fail(key, "must be a mapping")
        for k in value:
            if k not in known:
                raise self.fail(
                    f"{key}.{k}" if key else str(k),
                    f"unknown key (known: {', '.join(known)})",
                )
        return value

    def int_(self, value, key: str, minimum: int = 0, maximum: int = MAX_RULE_INT) -> int:
        if isinstance(value, bool) or not isinstance(value, int) or value < minimum:
            raise self.fail(key, f"must be an integer >= {minimum}, got {value!r}")
        if value > maximum:
            raise self.fail(key, f"must be an integer <= {maximum}, got {value}")
        return value

    def number(self, value, key: str, minimum: float = 0) -> float:
        if (
            isinstance(value, bool)
            or not isinstance(value, int | float)
            or (isinstance(value, float) and not math.isfinite(value))
            or not minimum <= value <= MAX_RULE_INT
        ):
            raise self.fail(
                key, f"must be a number from {minimum} to {MAX_RULE_INT}, got {value!r}"
            )
        return float(value)

    def bool_(self, value, key: str) -> bool:
        if not isinstance(value, bool):
            raise self.fail(key, f"must be true or false, got {value!r}")
        return value

    def choice(self, value, key: str, choices: tuple[str, ...]) -> str:
        if value not in choices:
            raise self.fail(key, f"must be one of {' | '.join(choices)}, got {value!r}")
        return value

    def strings(self, value, key: str) -> list[str]:
        if isinstance(value, str):
            value = [value]
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise self.fail(key, "must be a list of strings")
        return value

    def langs(self, value, key: str) -> tuple[str, ...]:
        out = []
        for i, v in enumerate(self.strings(value, key)):
            if not is_language_tag(v, allow_empty=True):
                raise self.fail(f"{key}[{i}]", f"{v!r} is not a BCP 47 language tag")
            out.append(v.lower())
        return tuple(out)

    def iri(self, ws: Workspace, value, key: str) -> str:
        if not isinstance(value, str):
            raise self.fail(key, f"must be a CURIE or <IRI>, got {value!r}")
        try:
            return ws.expand(value, key)
        except KgkitError:
            raise self.fail(
                key, f"{value!r} is neither an <IRI> nor a CURIE with a known prefix"
            ) from None

    def params(self, value, key: str) -> dict[str, str]:
        value = self.mapping(value, key, tuple(value or ())) if value is not None else {}
        out = {}
        for k, v in value.items():
            if isinstance(v, bool) or not isinstance(v, str | int | float):
                raise self.fail(f"{key}.{k}", f"must be a single value, got {v!r}")
            if isinstance(v, float) and not math.isfinite(v):
                raise self.fail(f"{key}.{k}", f"must be a finite number, got {v!r}")
            out[str(k)] = str(v)
        return out


def _templates(ws: Workspace) -> dict | None:
    """name -> template, or None when the template layer is not available."""
    try:
        from kgkit.templates import list_templates
    except ImportError:  # pragma: no cover - the template layer ships with kgkit
        return None
    return {t.name: t for t in list_templates(ws)}


def _check_template(
    c: _Checker, ws: Workspace, name, key: str, known: dict | None, params: dict, pkey: str
) -> str:
    """The template exists, its parameters are declared, required ones given, values valid."""
    if not isinstance(name, str) or not name:
        raise c.fail(key, "must name a template")
    if known is None:
        return name
    if name not in known:
        raise c.fail(key, f"unknown template {name!r} (known: {', '.join(sorted(known))})")
    tpl = known[name]
    from kgkit.templates import parse_value

    declared = {p.name: p for p in tpl.params}
    for pname, raw in params.items():
        if pname not in declared:
            raise c.fail(
                f"{pkey}.{pname}",
                f"template {name!r} has no parameter {pname!r} "
                f"(parameters: {', '.join(declared) or 'none'})",
            )
        try:
            parse_value(declared[pname], raw, ws)
        except KgkitError as exc:
            raise c.fail(f"{pkey}.{pname}", str(exc)) from None
    for p in tpl.params:
        if p.required and p.name not in params:
            raise c.fail(pkey, f"template {name!r} needs the parameter {p.name!r}")
    return name


def parse_spec(
    data: object, path: Path, ws: Workspace, text: str = "", lines: dict[str, int] | None = None
) -> VocabSpec:
    """Validate parsed YAML ``data`` read from ``path``; raise SpecError on the first fault.

    ``lines`` (key path -> line, from :func:`kgkit.inputs.load_yaml`) or the ``text``
    the data came from let messages name the line of a bad key.
    """
    path = Path(path)
    c = _Checker(path, lines if lines is not None else _key_lines(text))
    if not isinstance(data, dict):
        raise SpecError(f"{path}: expected a mapping of spec keys at the top level")
    d = c.mapping(data, "", TOP_KEYS)
    for req in ("name", "namespace", "select"):
        if req not in d:
            raise SpecError(f"{path}: key {req!r} is required")
    name = d["name"]
    if not isinstance(name, str) or not _NAME.match(name):
        raise c.fail("name", "must be a short word of letters, digits, '.', '_' or '-'")
    title = d.get("title", name)
    if not isinstance(title, str):
        raise c.fail("title", "must be text")
    ns = d["namespace"]
    if not isinstance(ns, str) or not re.match(r"^[a-zA-Z][a-zA-Z0-9+.-]*:[^\s<>\"{}|^`\\]+$", ns):
        raise c.fail("namespace", "must be an absolute IRI")
    if not ns.endswith(("/", "#", ":")):
        raise c.fail("namespace", "must end with '/', '#' or ':' so that topic ids can follow")
    scheme = d.get("scheme")
    scheme = c.iri(ws, scheme, "scheme") if scheme is not None else ns.rstrip("/#:")
    graphs = d.get("graphs")
    if graphs is not None:
        graphs = tuple(c.strings(graphs, "graphs"))

    known = _templates(ws)
    raw_select = d["select"]
    if not isinstance(raw_select, list) or not raw_select:
        raise c.fail("select", "must be a non-empty list of template runs")
    select = []
    for i, entry in enumerate(raw_select):
        key = f"select[{i}]"
        e = c.mapping(entry, key, ("template", "params", "include_root", "variable"))
        if "template" not in e:
            raise c.fail(key, "needs a 'template'")
        params = c.params(e.get("params"), f"{key}.params")
        tname = _check_template(
            c, ws, e["template"], f"{key}.template", known, params, f"{key}.params"
        )
        include_root = c.bool_(e.get("include_root", False), f"{key}.include_root")
        if include_root:
            if "root" not in params:
                raise c.fail(f"{key}.include_root", "needs a 'root' parameter")
            c.iri(ws, params["root"], f"{key}.params.root")
        variable = e.get("variable")
        if variable is not None and not isinstance(variable, str):
            raise c.fail(f"{key}.variable", "must be a result variable name")
        select.append(Selection(tname, params, include_root, variable))

    include = tuple(
        c.iri(ws, v, f"include[{i}]")
        for i, v in enumerate(c.strings(d.get("include", []), "include"))
    )
    exclude = tuple(
        c.iri(ws, v, f"exclude[{i}]")
        for i, v in enumerate(c.strings(d.get("exclude", []), "exclude"))
    )

    lg = c.mapping(d.get("languages"), "languages", ("required", "optional", "fallback", "missing"))
    languages = LanguageRules(
        required=c.langs(lg.get("required", []), "languages.required"),
        optional=c.langs(lg["optional"], "languages.optional") if "optional" in lg else None,
        fallback=c.langs(lg.get("fallback", []), "languages.fallback"),
        missing=c.choice(lg.get("missing", "keep"), "languages.missing", ("keep", "drop")),
    )

    al = c.mapping(
        d.get("aliases"),
        "aliases",
        (
            "ambiguous",
            "min_length",
            "drop_numeric",
            "stop",
            "hidden",
            "inflected_forms",
            "common_words",
        ),
    )
    from kgkit.vocab.forms import FORM_LANGUAGES

    forms = c.langs(al.get("inflected_forms", []), "aliases.inflected_forms")
    for i, lang in enumerate(forms):
        if lang.split("-", 1)[0] not in FORM_LANGUAGES:
            raise c.fail(
                f"aliases.inflected_forms[{i}]",
                f"no inflected forms for {lang!r} (languages served: {', '.join(FORM_LANGUAGES)})",
            )
    common = None
    if al.get("common_words") is not None:
        ck = "aliases.common_words"
        cw = c.mapping(al["common_words"], ck, ("min_zipf", "drop_aliases"))
        if "min_zipf" not in cw:
            raise c.fail(ck, "needs 'min_zipf' (a Zipf frequency, e.g. 4.5)")
        mz = cw["min_zipf"]
        if isinstance(mz, bool) or not isinstance(mz, int | float) or not 0 <= mz <= 10:
            raise c.fail(f"{ck}.min_zipf", f"must be a number from 0 to 10, got {mz!r}")
        common = CommonWordRule(
            float(mz), c.bool_(cw.get("drop_aliases", False), f"{ck}.drop_aliases")
        )
    aliases = AliasRules(
        ambiguous=c.choice(al.get("ambiguous", "keep"), "aliases.ambiguous", AMBIGUITY_POLICIES),
        min_length=c.int_(al.get("min_length", 0), "aliases.min_length"),
        drop_numeric=c.bool_(al.get("drop_numeric", False), "aliases.drop_numeric"),
        stop=tuple(c.strings(al.get("stop", []), "aliases.stop")),
        hidden=c.bool_(al.get("hidden", True), "aliases.hidden"),
        inflected_forms=tuple(dict.fromkeys(forms)),
        common_words=common,
    )

    pr = c.mapping(
        d.get("prune"),
        "prune",
        ("max_depth", "min_descendants", "min_instances", "min_popularity", "stop_topics"),
    )
    pop = None
    if pr.get("min_popularity") is not None:
        pk = "prune.min_popularity"
        p = c.mapping(pr["min_popularity"], pk, ("template", "params", "min", "variable"))
        if "template" not in p or "min" not in p:
            raise c.fail(pk, "needs 'template' and 'min'")
        m = c.number(p["min"], f"{pk}.min")
        variable = p.get("variable")
        if variable is not None and not isinstance(variable, str):
            raise c.fail(f"{pk}.variable", "must be a result variable name")
        pparams = c.params(p.get("params"), f"{pk}.params")
        pop = PopularityRule(
            _check_template(c, ws, p["template"], f"{pk}.template", known, pparams, f"{pk}.params"),
            pparams,
            float(m),
            variable,
        )

    def opt_int(key: str) -> int | None:
        v = pr.get(key)
        return None if v is None else c.int_(v, f"prune.{key}")

    prune = PruneRules(
        max_depth=opt_int("max_depth"),
        min_descendants=opt_int("min_descendants"),
        min_instances=opt_int("min_instances"),
        min_popularity=pop,
        stop_topics=tuple(
            c.iri(ws, v, f"prune.stop_topics[{i}]")
            for i, v in enumerate(c.strings(pr.get("stop_topics", []), "prune.stop_topics"))
        ),
    )

    cur = d.get("curation")
    if cur is None:
        curation = path.parent / f"{name}.curation.yaml"
        if os.path.lexists(curation) and not curation.is_file():
            raise SpecError(f"{one_line(str(curation))}: not a regular file, not a curation file")
    else:
        if not isinstance(cur, str) or not cur.strip():
            raise c.fail("curation", "must be a file path (relative to the spec)")
        curation = path.parent / cur
        if not os.path.lexists(curation):
            raise c.fail("curation", f"no such curation file: {curation}")
        if not curation.is_file():
            raise c.fail("curation", f"{curation} is not a regular file")
    outputs = d.get("outputs", list(OUTPUTS))
    out_list = c.strings(outputs, "outputs")
    for i, o in enumerate(out_list):
        c.choice(o, f"outputs[{i}]", tuple(OUTPUTS))
    return VocabSpec(
        path=path,
        name=name,
        title=title,
        namespace=ns,
        scheme=scheme,
        graphs=graphs,
        select=tuple(select),
        include=include,
        exclude=exclude,
        languages=languages,
        aliases=aliases,
        prune=prune,
        curation=curation,
        outputs=tuple(o for o in OUTPUTS if o in out_list),
        max_topic_loss=_max_topic_loss(c, d),
    )


def _max_topic_loss(c: _Checker, d: dict) -> float:
    rel = c.mapping(d.get("release"), "release", ("max_topic_loss",))
    v = rel.get("max_topic_loss", 0.1)
    if isinstance(v, bool) or not isinstance(v, int | float) or not 0 <= v <= 1:
        raise c.fail(
            "release.max_topic_loss",
            f"must be a share from 0 to 1 (0.1 = ten per cent), got {v!r}",
        )
    return float(v)


def load_spec(ws: Workspace, spec_path: Path | str) -> VocabSpec:
    """Read and validate the spec at ``spec_path`` (relative: to the current folder)."""
    path = Path(spec_path)
    if not path.is_absolute() and not path.exists() and (ws.root / path).exists():
        path = ws.root / path
    if not os.path.lexists(path):
        raise SpecError(f"{one_line(str(spec_path))}: no such spec file")
    doc = read_yaml(path, "a vocabulary spec", SpecError)
    return parse_spec(doc.data, path.resolve(), ws, lines=doc.lines)

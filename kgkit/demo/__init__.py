"""The demo: an invented knowledge graph of the Tidewell Media Cooperative, and a run of the job.

Everything in the demo data is invented: the cooperative, its towns, its people.
:func:`run_demo` builds a workspace and runs the whole job on it, step by step,
with the same library functions the commands call:

1. make the workspace; write the dump (N-Triples and entity records) and a corpus;
2. import it, sliced to the profile and two languages, bad lines set aside;
3. explore it with templates;
4. compile the vocabulary spec and release 1.0.0;
5. probe the corpus and turn the too-common aliases into curation edits, add a
   few hand edits;
6. import the refreshed dump, compile and release again, with its changelog;
7. write the review page, and probe one article;
8. list the names several topics share, turn on the lexicon rules (plural forms,
   common words) and settle one shared name with a curation edit; probe a
   sentence with plurals and an everyday phrase.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

from kgkit.demo.generate import REFRESH, write_corpus, write_dumps
from kgkit.entities import find_entities, format_matches
from kgkit.errors import DemoError
from kgkit.files import write_text_atomic
from kgkit.ingest import ImportOptions, import_files, make_slice
from kgkit.probe import curation_edits_for, load_lexicon, probe_corpus
from kgkit.query import connect, run_query
from kgkit.release.release import make_release
from kgkit.review import write_page
from kgkit.templates import run_template
from kgkit.vocab.compile import compile_vocabulary
from kgkit.vocab.curation import load_curation
from kgkit.wording import topic_text
from kgkit.worklist import list_shared_names
from kgkit.workspace import CONFIG_NAME, init_workspace, load_workspace

__all__ = ["DemoStep", "DemoError", "iter_demo", "run_demo", "SPEC_NAME"]

SPEC_NAME = "tidewell"
_PREFIX_LINE = "  tw:   http://demo.kgkit.invalid/e/\n"
_P = "http://demo.kgkit.invalid/p/"


@dataclass
class DemoStep:
    """One step of the demo run: what was done, what it showed, and the files it left."""

    title: str
    lines: list[str] = field(default_factory=list)
    files: list[Path] = field(default_factory=list)


def _asset(name: str) -> str:
    return resources.files("kgkit.demo").joinpath(name).read_text(encoding="utf-8")


def _add_prefix(root: Path) -> None:
    """Give the demo workspace the ``tw:`` prefix for its entities."""
    path = root / CONFIG_NAME
    text = path.read_text(encoding="utf-8")
    text = text.replace("\nprefixes:\n", "\nprefixes:\n" + _PREFIX_LINE, 1)
    write_text_atomic(path, text)


def _counts(s) -> str:
    return (
        f"read {s.read:,} = loaded {s.loaded:,} + duplicates {s.duplicates:,} "
        f"+ filtered {s.filtered:,} + rejected {s.rejected:,}"
    )


def _import(ws, graph: str, files: list[Path], rejects: Path, sliced: bool):
    opts = ImportOptions(
        graph=graph,
        on_error="skip",
        rejects=rejects,
        slice=make_slice(ws, scope="profile", literal_languages=["en", "de"])
        if sliced
        else make_slice(ws),
    )
    (summary,) = import_files(ws, [str(f) for f in files], opts)
    return summary


def _rejected_causes(path: Path, limit: int = 3) -> list[str]:
    if not path.is_file():
        return []
    lines = [x[2:] for x in path.read_text(encoding="utf-8").splitlines() if x.startswith("# ")]
    out = [f"set aside: {x}" for x in lines[:limit]]
    if len(lines) > limit:
        out.append(f"... and {len(lines) - limit} more")
    return out


def _explore(ws) -> DemoStep:

    step = DemoStep("explored the graphs with templates and SPARQL")
    with connect(ws) as backend:
        res = run_template(backend, "descendants", {"root": "tw:water-sports", "max_depth": "2"})
        rows = list(res.rows)
        step.lines.append(f"descendants of tw:water-sports to depth 2: {len(rows)} entities, e.g.")
        shown = sorted((int(r[1].value), ws.compact(r[0].value)) for r in rows)[:3]
        step.lines += [f"  depth {d}  {c}" for d, c in shown]
        res = run_template(backend, "children", {"entity": "tw:crafts"})
        kids = sorted(
            (-int(r[2].value), r[1].value if r[1] is not None else ws.compact(r[0].value))
            for r in res.rows
        )
        step.lines.append(
            f"children of tw:crafts: {len(kids)}; the largest: "
            + ", ".join(f"{label} ({-n})" for n, label in kids[:3])
        )
        matches = [m for m in find_entities(backend, "netting") if m.kind == "alias"]
        step.lines.append("two topics share the alias 'netting'; their parents tell them apart:")
        step.lines += ["  " + x for x in format_matches(matches).splitlines()]
        res = run_query(
            backend,
            "SELECT ?topic (COUNT(?clip) AS ?clips) WHERE { ?clip <"
            + _P
            + "about> ?topic } GROUP BY ?topic ORDER BY DESC(?clips) ?topic LIMIT 3",
        )
        step.lines.append(
            "most filmed topics in the archive: "
            + ", ".join(f"{ws.compact(r[0].value)} ({r[1].value} clips)" for r in res.rows)
        )
    return step


def _topline(path: Path, n: int) -> list[str]:
    return path.read_text(encoding="utf-8").splitlines()[:n]


#: the lexicon rules the demo turns on after release 2 (see docs/lexicon.md)
LEXICON_RULES = "  inflected_forms: [en]\n  common_words: {min_zipf: 4.5}\n"
#: the curation edit that settles the name two topics share
SETTLE_KEEP = "net-mending"
SETTLE_EDIT = (
    f"  - settle: {{name: netting, keep: [{SETTLE_KEEP}]}}\n"
    "    note: the crafts desk's word; crop netting goes by its full name\n"
)
#: a sentence of our own with plurals and an everyday phrase
RULES_SENTENCE = (
    "At the Fallowwick regattas the crews kept going about, "
    "and the stalls sold crab salads and oak carvings."
)


_KIND_WORDS = {"preferred": "preferred label", "inflected": "plural form"}


def _shared_lines(names, n: int = 3) -> list[str]:
    out = []
    for x in names[:n]:
        label = "preferred label" if x.preferred_by else "alias"
        shown = ", ".join(topic_text(c.label, c.topic) for c in x.candidates)
        out.append(
            f"  {x.key!r}: {len(x.topics)} topics ({shown}), {label}, Zipf {x.zipf or 0:.2f}"
        )
    return out


def _lexicon_rules(ws, spec: Path, curation: Path, release: Path) -> Iterator[DemoStep]:
    """The lexicon rules on the demo: the worklist, plurals, common words, a settled name."""
    shared = list_shared_names(release)
    yield DemoStep(
        f"listed the names several topics share in release {release.name} (riskiest first)",
        [f"{len(shared)} shared names", *_shared_lines(shared)],
        [],
    )
    text = spec.read_text(encoding="utf-8")
    text = text.replace("  stop: [other, misc]\n", "  stop: [other, misc]\n" + LEXICON_RULES, 1)
    spec.write_text(text, encoding="utf-8")
    curation.write_text(curation.read_text(encoding="utf-8") + SETTLE_EDIT, encoding="utf-8")
    result = compile_vocabulary(ws, spec)
    report, counts, vocab = result.report, result.report["counts"], result.vocabulary
    common = report.get("common_words") or []
    lines = [
        f"plural forms added to the lexicon: {counts['inflected_forms']}",
        f"common words (Zipf 4.5 or more): {len(common)}, the most frequent:",
        *(
            f"  {c['alias']!r} ({c['language']}) Zipf {c['zipf']:.2f}, "
            f"{' and '.join(_KIND_WORDS.get(k, k) for k in c['kinds'])} of "
            f"{', '.join(topic_text(vocab.display_label(t), t) for t in c['topics'])}"
            for c in common[:3]
        ),
    ]
    for d in report["dropped_aliases"]:
        if d["reason"].startswith("settled-by-curation"):
            kept = topic_text(vocab.display_label(SETTLE_KEEP), SETTLE_KEEP)
            taken = topic_text(vocab.display_label(d["topic"]), d["topic"])
            lines.append(f"settled {d['alias']!r}: kept by {kept}, taken from {taken}")
    left = list_shared_names(result.output)
    lines.append(f"shared names left in the build: {len(left)}")
    yield DemoStep(
        "turned on plural forms and common words, and settled 'netting' by a curation edit",
        lines,
        [spec, curation, result.output],
    )
    lexicon = load_lexicon(result.output)
    by_key = {c["alias"].casefold(): c for c in common}
    lines = [RULES_SENTENCE]
    for h in lexicon.find(RULES_SENTENCE):
        rows = lexicon.by_key[h.key]
        made = [r for r in rows if r.source]
        how = f"plural of {made[0].source!r}" if made else rows[0].kind
        risk = f"  common word, Zipf {by_key[h.key]['zipf']:.2f}" if h.key in by_key else ""
        shown = ", ".join(topic_text(c.label, c.topic) for c in h.candidates)
        lines.append(f"  {h.text!r} -> {shown} ({how}){risk}")
    yield DemoStep("probed a sentence with the new build", lines, [])


def run_demo(directory: Path) -> list[DemoStep]:
    """Build the demo workspace in ``directory`` and run the job on it.

    The folder must not hold a workspace yet. Returns the steps, in order.
    """
    return list(iter_demo(directory))


def iter_demo(directory: Path) -> Iterator[DemoStep]:
    """:func:`run_demo`, one step at a time (each is yielded when it is done)."""
    directory = Path(directory)
    if (directory / CONFIG_NAME).exists():
        raise DemoError(f"{directory} already holds a workspace; give a new folder")
    init_workspace(directory, languages=("en", "de"))
    _add_prefix(directory)
    ws = load_workspace(directory)
    yield DemoStep("made the workspace", files=[ws.root / CONFIG_NAME, ws.store_path])

    dumps = write_dumps(directory / "dumps")
    corpus = write_corpus(directory / "corpus")
    yield (
        DemoStep(
            "wrote the invented dump of the Tidewell Media Cooperative and a corpus",
            [f"{len(corpus)} articles in {directory / 'corpus'}"],
            [*dumps.values()],
        )
    )

    rejects_dir = directory / "rejects"
    topics_rejects = rejects_dir / "tidewell.rejects.txt"
    s = _import(ws, "tidewell", [dumps["core"], dumps["topics"]], topics_rejects, sliced=True)
    yield (
        DemoStep(
            "imported the topics into graph 'tidewell', keeping profile predicates in en and de",
            [_counts(s), *_rejected_causes(topics_rejects)],
            [topics_rejects],
        )
    )
    archive_rejects = rejects_dir / "archive.rejects.txt"
    s = _import(ws, "archive", [dumps["archive"]], archive_rejects, sliced=False)
    yield (
        DemoStep(
            "imported people and clips (entity records) into graph 'archive'",
            [_counts(s), *_rejected_causes(archive_rejects)],
            [archive_rejects],
        )
    )

    yield _explore(ws)

    vocab = ws.vocab_dir
    spec = vocab / f"{SPEC_NAME}.yaml"
    spec.write_text(_asset("tidewell.yaml"), encoding="utf-8")
    curation = vocab / f"{SPEC_NAME}.curation.yaml"
    curation.write_text(_asset("curation-start.yaml"), encoding="utf-8")

    result = compile_vocabulary(ws, spec)
    yield (
        DemoStep(
            "compiled the vocabulary spec",
            _topline(result.output / "report.txt", 12),
            [spec, result.output],
        )
    )

    first = make_release(ws, spec)
    yield DemoStep(f"released {SPEC_NAME} {first.version}", [], [Path(first.path)])

    lexicon = load_lexicon(first.path)
    report = probe_corpus(lexicon, directory / "corpus")
    edits, _skipped = curation_edits_for(report)
    lines = [f"{report.documents} documents, {report.hits} hits"]
    for k in report.keys[:5]:
        flag = "  too common" if k.flagged else ""
        lines.append(f"  {k.key!r} in {k.documents} documents ({k.share:.0%}){flag}")
    yield DemoStep(f"probed the corpus with release {first.version}", lines, [])

    text = curation.read_text(encoding="utf-8") + _asset("curation-edits.yaml")
    for e in edits:
        args = e["remove_alias"]
        text += (
            f"  - remove_alias: {json.dumps(args, ensure_ascii=False)}\n"
            f"    note: {json.dumps(e['note'], ensure_ascii=False)}\n"
        )
    curation.write_text(text, encoding="utf-8")
    yield (
        DemoStep(
            "curated: hand edits, plus the too-common aliases the probe flagged",
            [f"{len(load_curation(curation))} edits in the curation file"],
            [curation],
        )
    )

    refreshed = write_dumps(directory / "dumps", refreshed=True)
    s = _import(
        ws, "tidewell", [refreshed["core"], refreshed["topics"]], topics_rejects, sliced=True
    )
    yield (
        DemoStep(
            "imported the refreshed dump into graph 'tidewell' (replacing it)",
            [_counts(s), *(f"in the dump: {why}" for why, _r, _a in REFRESH)],
            [refreshed["core"]],
        )
    )

    second = make_release(ws, spec)
    changelog = Path(second.path) / "changelog.md"
    yield (
        DemoStep(
            f"released {SPEC_NAME} {second.version}",
            [
                f"{second.previous} -> {second.version} ({second.level}):",
                *(
                    ("  " + x[3:] + ":") if x.startswith("## ") else ("    " + x[2:])
                    for x in changelog.read_text(encoding="utf-8").splitlines()
                    if x.startswith(("## ", "- "))
                ),
            ],
            [Path(second.path), changelog],
        )
    )

    page = write_page(second.path, directory / f"{SPEC_NAME}-{second.version}-review.html")
    yield DemoStep("wrote the review page (open it in a browser)", [], [page])

    # the first article where a name is ambiguous, to show what an annotator faces
    lexicon2 = load_lexicon(second.path)
    article, hits = corpus[0], lexicon2.find(corpus[0].read_text(encoding="utf-8"))
    for path in corpus:
        found = lexicon2.find(path.read_text(encoding="utf-8"))
        if any(h.is_ambiguous for h in found):
            article, hits = path, found
            break
    lines = []
    for h in hits[:6]:
        cands = " | ".join(
            f"{topic_text(c.label, c.topic)}, under "
            + (", ".join(topic_text(lab, p) for p, lab in c.parents) or "nothing")
            for c in h.candidates
        )
        mark = "  ambiguous" if h.is_ambiguous else ""
        lines.append(f"[{h.start}:{h.end}] {h.text!r} -> {cands}{mark}")
    yield DemoStep(f"probed {article.name} with release {second.version}", lines, [])

    yield from _lexicon_rules(ws, spec, curation, Path(second.path))

"""The review page: one self-contained HTML file for a release or a build.

Everything the page needs is inside it (styles, script, data and the charts as
inline SVG), so it opens from a file, offline, and can be mailed around. It holds:

- a topic tree that folds and unfolds, with a search box over labels and aliases
  (matched the way the lexicon matches: NFKC and case folding);
- per topic: labels by language, aliases, parents, children, and where it came
  from (source IRI, graph, origin, flags, status and replacement);
- tables of ambiguous aliases, common words (names frequent in general text, when
  the spec asks), dropped topics and aliases with their reasons,
  hierarchy repairs, lint findings (from :mod:`kgkit.release.lint`) and the
  changelog against the previous release;
- charts of topics by depth and of label coverage by language.

>>> from pathlib import Path
>>> page = render_page(Review(title="t", kind="build", path=Path("."), topics=[]))
>>> page.startswith("<!DOCTYPE html>")
True
"""

from __future__ import annotations

import html
import json
import os
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

from kgkit.errors import ReviewError
from kgkit.files import write_text_atomic
from kgkit.inputs import read_json, shape_error
from kgkit.release.diffing import display_languages_of
from kgkit.vocab.folder import REPORT_SHAPE, read_topics
from kgkit.vocab.model import TopicRecord
from kgkit.wording import topic_text

__all__ = ["Review", "ReviewError", "load_review", "render_page", "write_page"]

_TOPIC_KEYS = (
    "id",
    "labels",
    "aliases",
    "parents",
    "depth",
    "status",
    "replaced_by",
    "source",
    "curie",
    "graph",
    "origin",
    "flags",
    "same_as",
    "notation",
)


@dataclass
class Review:
    """What a review page shows, read from one release or build folder."""

    title: str
    kind: str  # "release" | "build"
    path: Path
    topics: list[TopicRecord]
    version: str | None = None
    report: dict | None = None
    manifest: dict | None = None
    changelog: dict | None = None  # {"previous", "counts", "changes": [...], ...}
    changelog_lines: list[str] = field(default_factory=list)
    lint: dict | None = None
    notes: list[str] = field(default_factory=list)  # what could not be shown, and why


def _read_json(path: Path, shape: object = dict) -> dict | None:
    """A JSON object of the folder, checked against ``shape``, or None when absent."""
    if not os.path.lexists(path):
        return None
    data = read_json(path, "a JSON file", ReviewError)
    problem = shape_error(data, shape) if isinstance(data, dict) else "must be a JSON object"
    if problem:
        raise ReviewError(f"{path}: {problem}")
    return data


def _read_topics(path: Path) -> list[TopicRecord]:
    return list(read_topics(path).values())


def _topic_json(t: TopicRecord) -> dict:
    """The fields of a topic the page's script reads."""
    return {k: getattr(t, k) for k in _TOPIC_KEYS}


def _describe_changes(changes: list[dict]) -> list[str]:
    try:
        from kgkit.release.diffing import Change, describe
    except ImportError:  # pragma: no cover - the release library ships with kgkit
        return []
    out = []
    for c in changes:
        ch = Change(
            kind=c["kind"],
            topic=c["topic"],
            ids=tuple(c.get("ids") or ()),
            cause=c.get("cause", "graph"),
            language=c.get("language"),
            before=c.get("before"),
            after=c.get("after"),
            labels=c.get("labels") if isinstance(c.get("labels"), dict) else {},
        )
        out.append(describe(ch))
    return out


def load_review(target: Path | str, lint: bool = True) -> Review:
    """Read a release folder (``vocab/NAME/VERSION``) or build folder (``vocab/NAME/build``).

    A build is compared with the newest release beside it, when there is one.
    ``lint`` runs the SKOS quality checks on the folder's ``skos.ttl``.
    """
    folder = Path(target)
    topics_path = folder / "topics.jsonl"
    if not topics_path.is_file():
        raise ReviewError(f"{folder}: not a release or build folder (no topics.jsonl in it)")
    manifest = _read_json(folder / "manifest.json")
    kind = "release" if manifest is not None else "build"
    name = (manifest or {}).get("vocabulary") or (manifest or {}).get("name") or folder.parent.name
    version = (manifest or {}).get("version") or (folder.name if kind == "release" else None)
    review = Review(
        title=str(name),
        kind=kind,
        path=folder,
        topics=sorted(_read_topics(topics_path), key=lambda t: t.id),
        version=version,
        report=_read_json(folder / "report.json", REPORT_SHAPE),
        manifest=manifest,
    )
    if kind == "release":
        review.changelog = _read_json(folder / "changelog.json", {"changes": ([dict], type(None))})
        if review.changelog is None:
            review.notes.append("no changelog.json in this release")
    else:
        from kgkit.release.diffing import diff_folders
        from kgkit.release.versioning import list_releases

        releases = list_releases(folder.parent)
        if releases:
            newest = folder.parent / str(releases[-1])
            diff = diff_folders(newest, folder).to_json()
            review.changelog = {"previous": str(releases[-1]), **diff}
        else:
            review.notes.append("no earlier release to compare this build with")
    if review.changelog:
        review.changelog_lines = _describe_changes(review.changelog.get("changes") or [])
    if lint:
        if (folder / "skos.ttl").is_file():
            from kgkit.release.lint import lint_path

            review.lint = lint_path(folder).to_json()
        else:
            review.notes.append("no skos.ttl here, so no lint findings")
    return review


# --- rendering ----------------------------------------------------------------

_e = html.escape


def _asset(name: str) -> str:
    return resources.files("kgkit.review").joinpath(name).read_text(encoding="utf-8")


def _json_for_script(data: object) -> str:
    text = json.dumps(data, ensure_ascii=False, sort_keys=True, separators=(",", ":"))
    # inside <script> nothing may close the element or open a comment
    return text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")


def _table(headers: list[str], rows: list[list[str]], empty: str, cls: str = "") -> str:
    if not rows:
        return f'<p class="empty">{_e(empty)}</p>'
    head = "".join(f"<th>{_e(h)}</th>" for h in headers)
    body = "".join("<tr>" + "".join(f"<td>{c}</td>" for c in r) + "</tr>" for r in rows)
    return (
        f'<div class="table-wrap"><table class="{cls}"><thead><tr>{head}</tr></thead>'
        f"<tbody>{body}</tbody></table></div>"
    )


def _tagged(cls: str, value: str) -> str:
    return f'<span class="{cls} {cls}-{_e(value)}">{_e(value)}</span>'


def _stale_line(edit: object) -> str:
    """One stale curation edit: which edit, what it did, on what, and why it no longer applies."""
    if not isinstance(edit, dict):
        return _e(str(edit))
    skip = {"action", "edit", "target", "reason", "note"}
    args = ", ".join(
        f"{k}: {json.dumps(v, ensure_ascii=False)}"
        for k, v in sorted(edit.items())
        if k not in skip
    )
    text = (
        f"<strong>{_e(str(edit.get('action', 'edit')))}</strong> {_topic_link(edit.get('target'))}"
    )
    if args:
        text += f" ({_e(args)})"
    if edit.get("edit") is not None:
        text = f"edit {_e(str(edit['edit']))}: " + text
    if edit.get("reason"):
        text += f" — {_e(str(edit['reason']))}"
    if edit.get("note"):
        text += f' <span class="note-text">note: {_e(str(edit["note"]))}</span>'
    return text


def _topic_link(tid: str | None, label: str | None = None) -> str:
    """A link to a topic's card, showing its label beside its id when it is known."""
    if not tid:
        return ""
    text = topic_text(label, tid) if label else tid
    return f'<a href="#topic={_e(tid)}" class="tref" data-topic="{_e(tid)}">{_e(text)}</a>'


def _bar_chart(title: str, bars: list[tuple[str, float, str]], unit: str = "") -> str:
    """Horizontal bars as inline SVG: (label, value, shown text)."""
    if not bars:
        return (
            f'<figure class="chart"><figcaption>{_e(title)}</figcaption>'
            '<p class="empty">no data</p></figure>'
        )
    row, label_w, width = 26, 120, 560
    plot_w = width - label_w - 120  # room for the value text after the longest bar
    top = max(v for _, v, _ in bars) or 1
    height = row * len(bars) + 10
    parts = [
        f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width} {height}" '
        f'width="100%" role="img" aria-label="{_e(title)}">'
    ]
    for i, (label, value, shown) in enumerate(bars):
        y = 5 + i * row
        w = max(plot_w * value / top, 1 if value else 0)
        parts.append(
            f'<text x="{label_w - 8}" y="{y + 16}" text-anchor="end" class="axis">'
            f"{_e(label)}</text>"
            f'<rect x="{label_w}" y="{y + 3}" width="{w:.1f}" height="{row - 8}" rx="3" '
            f'class="bar"><title>{_e(label)}: {_e(shown)}{_e(unit)}</title></rect>'
            f'<text x="{label_w + w + 6:.1f}" y="{y + 16}" class="value">{_e(shown)}</text>'
        )
    parts.append("</svg>")
    return f'<figure class="chart"><figcaption>{_e(title)}</figcaption>{"".join(parts)}</figure>'


def _charts(review: Review) -> str:
    active = [t for t in review.topics if t.is_active]
    depths: dict[int, int] = {}
    for t in active:
        d = t.depth
        if isinstance(d, int):
            depths[d] = depths.get(d, 0) + 1
    depth_bars = [(f"depth {d}", n, f"{n:,}") for d, n in sorted(depths.items())]
    langs: dict[str, int] = {}
    for t in active:
        for lang, text in t.labels.items():
            if text:
                langs[lang] = langs.get(lang, 0) + 1
    total = len(active) or 1
    cover_bars = [
        (lang or "untagged", n / total * 100, f"{n / total:.0%} ({n:,})")
        for lang, n in sorted(langs.items(), key=lambda kv: (-kv[1], kv[0]))
    ]
    return _bar_chart("Topics by depth", depth_bars) + _bar_chart(
        "Preferred-label coverage by language (share of active topics)", cover_bars
    )


def _provenance(manifest: dict | None) -> str:
    """Where a release came from, as its manifest records it."""
    if not manifest:
        return '<p class="empty">a build has no manifest; release it to record its sources.</p>'
    rows = []
    for src in manifest.get("sources") or []:
        files = "<br>".join(
            f"{_e(str(f.get('name', '')))} <code>sha256 {_e(str(f.get('sha256', ''))[:16])}…</code>"
            for f in src.get("files") or []
        )
        rows.append(
            [
                _e(str(src.get("graph", ""))),
                files,
                _e(f"{src.get('triples', 0):,}"),
                f"<code>{_e(str(src.get('sha256', ''))[:16])}…</code>",
            ]
        )
    facts = []
    for key in ("spec", "curation"):
        item = manifest.get(key)
        if isinstance(item, dict) and item.get("path"):
            facts.append(
                f"{key} <code>{_e(str(item['path']))}</code> "
                f"<code>sha256 {_e(str(item.get('sha256', ''))[:16])}…</code>"
            )
    for t in manifest.get("templates") or []:
        facts.append(f"template <code>{_e(str(t.get('name', '')))}</code>")
    facts.append(f"content <code>sha256 {_e(str(manifest.get('content_sha256', '')))}</code>")
    if manifest.get("released"):
        facts.append(f"released {_e(str(manifest['released']))}")
    if manifest.get("kgkit_version"):
        facts.append(f"kgkit {_e(str(manifest['kgkit_version']))}")
    table = _table(["graph", "files", "statements", "graph sha256"], rows, "no source graphs.")
    return table + '<ul class="facts-list">' + "".join(f"<li>{f}</li>" for f in facts) + "</ul>"


def _section(anchor: str, title: str, count: int | None, body: str) -> str:
    badge = f' <span class="badge">{count:,}</span>' if count is not None else ""
    return f'<section id="{anchor}"><h2>{_e(title)}{badge}</h2>{body}</section>'


def render_page(review: Review) -> str:
    """The review page as one HTML string (deterministic for the same folder)."""
    report = review.report or {}
    topics = review.topics
    active = [t for t in topics if t.is_active]
    deprecated = [t for t in topics if not t.is_active]
    n_aliases = sum(len(v) for t in active for v in t.aliases.values())
    languages = sorted({lang for t in active for lang in t.labels})
    shown_in = tuple(((report.get("spec") or {}).get("languages")) or ()) or tuple(
        display_languages_of({t.id: t for t in topics})
    )
    label_of = {t.id: t.label(shown_in) for t in topics}

    def link(tid: str | None) -> str:
        return _topic_link(tid, label_of.get(tid) if tid else None)

    ambiguous = report.get("ambiguous") or []
    amb_rows = [
        [
            f"<code>{_e(a.get('key', ''))}</code>",
            ", ".join(link(t) for t in a.get("topics") or []),
            _e(str(a.get("action", ""))),
        ]
        for a in ambiguous
    ]
    common = report.get("common_words")  # present when the spec sets aliases.common_words
    common_rows = [
        [
            _e(c.get("alias") or ""),
            _e(c.get("language") or "-"),
            _e(f"{c.get('zipf', 0):.2f}"),
            ", ".join(link(t) for t in c.get("topics") or []),
            _e(", ".join(c.get("kinds") or [])),
        ]
        for c in common or []
    ]
    dropped = report.get("dropped_topics") or []
    drop_rows = [
        [
            _e(topic_text(d.get("label"), d.get("id") or "")),
            f'<span class="iri">{_e(d.get("source") or "")}</span>',
            _e(d.get("reason") or ""),
        ]
        for d in dropped
    ]
    dropped_aliases = report.get("dropped_aliases") or []
    dalias_rows = [
        [
            link(d.get("topic")),
            _e(d.get("alias") or ""),
            _e(d.get("language") or "-"),
            _e(d.get("reason") or ""),
        ]
        for d in dropped_aliases
    ]
    repairs = []
    for c in report.get("cycles") or []:
        members = ", ".join(c.get("members") or [])
        edge = " → ".join(c.get("broken_edge") or [])
        repairs.append(["cycle broken", _e(members), _e(f"removed link {edge}")])
    for child, parent in report.get("reductions") or []:
        repairs.append(["redundant parent", link(child), _e(f"removed link to {parent}")])
    for r in report.get("new_roots") or []:
        repairs.append(["new root", link(r if isinstance(r, str) else str(r)), ""])
    for r in report.get("reattached") or []:
        text = r if isinstance(r, str) else json.dumps(r, ensure_ascii=False, sort_keys=True)
        repairs.append(["reattached", _e(text), ""])

    lint = review.lint
    if lint is None:
        lint_body = '<p class="empty">lint was not run for this page.</p>'
        n_lint = None
    else:
        findings = lint.get("findings") or []
        n_lint = len(findings)
        per_check: dict[tuple[str, str], int] = {}
        for f in findings:
            k = (f.get("level", ""), f.get("check", ""))
            per_check[k] = per_check.get(k, 0) + 1
        chips = "".join(
            f'<li><span class="lvl lvl-{_e(lvl)}">{_e(check)}</span> <b>{n:,}</b></li>'
            for (lvl, check), n in sorted(per_check.items(), key=lambda kv: (kv[0][0], -kv[1]))
        )
        lint_body = (f'<ul class="chips">{chips}</ul>' if chips else "") + _table(
            ["level", "check", "concepts", "finding"],
            [
                [
                    _tagged("lvl", f.get("level", "")),
                    f'<span title="{_e(f.get("summary", ""))}">{_e(f.get("check", ""))}</span>',
                    ", ".join(
                        link(short) if short in label_of else _e(short)
                        for short in (x.rsplit("/", 1)[-1] for x in f.get("subjects") or [])
                    ),
                    _e(f.get("message", "")),
                ]
                for f in findings
            ],
            "no lint findings: every check passed.",
        )

    log = review.changelog
    if log is None:
        log_body = '<p class="empty">no changelog for this page.</p>'
        n_changes = None
    else:
        changes = log.get("changes") or []
        n_changes = len(changes)
        prev = log.get("previous")
        intro = (
            f"<p>Against <strong>{_e(str(prev))}</strong>"
            + (
                f": version step <strong>{_e(str(log.get('level')))}</strong>"
                f" ({_e(str(log.get('reason', '')))})"
                if log.get("level")
                else ""
            )
            + ".</p>"
            if prev
            else "<p>First release: nothing to compare with.</p>"
        )
        counts = log.get("counts") or {}
        count_html = (
            '<ul class="chips">'
            + "".join(f"<li>{_e(k)} <b>{n:,}</b></li>" for k, n in counts.items())
            + "</ul>"
            if counts
            else ""
        )
        rows = []
        for i, c in enumerate(changes):
            text = review.changelog_lines[i] if i < len(review.changelog_lines) else ""
            rows.append(
                [
                    _tagged("kind", c.get("kind", "")),
                    link(c.get("topic")),
                    _e(text),
                    _e(c.get("cause", "")),
                ]
            )
        stale = log.get("stale_curation") or []
        stale_html = ""
        if stale:
            stale_html = (
                "<h3>Curation edits that no longer apply</h3><ul class='stale'>"
                + "".join(f"<li>{_stale_line(x)}</li>" for x in stale)
                + "</ul>"
            )
        log_body = (
            intro
            + count_html
            + _table(["change", "topic", "what", "cause"], rows, "no topic changed.")
            + stale_html
        )

    stale_cur = ((report.get("curation") or {}).get("stale")) or []
    applied_cur = ((report.get("curation") or {}).get("applied")) or []
    overridden_cur = ((report.get("curation") or {}).get("overridden")) or []
    heading = f"{review.title} {review.version}" if review.version else f"{review.title} (build)"
    facts = [
        ("topics", f"{len(active):,}"),
        ("deprecated", f"{len(deprecated):,}"),
        ("aliases", f"{n_aliases:,}"),
        ("languages", ", ".join(lang or "untagged" for lang in languages) or "none"),
        ("ambiguous keys", f"{len(ambiguous):,}"),
        *([("common words", f"{len(common):,}")] if common is not None else []),
        ("dropped topics", f"{len(dropped):,}"),
        (
            "curation edits",
            f"{len(applied_cur):,} applied, {len(overridden_cur):,} overridden, "
            f"{len(stale_cur):,} stale",
        ),
    ]
    if lint is not None:
        lc = lint.get("counts") or {}
        facts.append(("lint", f"{lc.get('error', 0)} errors, {lc.get('warning', 0)} warnings"))
    fact_html = "".join(f"<div><dt>{_e(k)}</dt><dd>{_e(v)}</dd></div>" for k, v in facts)
    notes_html = "".join(f'<p class="note">{_e(n)}</p>' for n in review.notes)
    data = {"topics": [_topic_json(t) for t in topics], "languages": languages}

    sections = "\n".join(
        [
            _section("changes", "Changes against the previous release", n_changes, log_body),
            _section(
                "ambiguous",
                "Ambiguous aliases",
                len(ambiguous),
                _table(
                    ["match key", "topics", "action"],
                    amb_rows,
                    "no match key is shared by two topics.",
                ),
            ),
            *(
                [
                    _section(
                        "common",
                        "Common words (frequent in general text: false hits likely)",
                        len(common),
                        _table(
                            ["name", "language", "Zipf", "topics", "kind"],
                            common_rows,
                            "no name reaches the spec's Zipf frequency.",
                        ),
                    )
                ]
                if common is not None
                else []
            ),
            _section(
                "dropped",
                "Dropped topics",
                len(dropped),
                _table(["topic", "source", "reason"], drop_rows, "no topic was dropped."),
            ),
            _section(
                "dropped-aliases",
                "Dropped aliases",
                len(dropped_aliases),
                _table(
                    ["topic", "alias", "language", "reason"], dalias_rows, "no alias was dropped."
                ),
            ),
            _section(
                "repairs",
                "Hierarchy repairs",
                len(repairs),
                _table(
                    ["repair", "topics", "what was done"],
                    repairs,
                    "the hierarchy needed no repair.",
                ),
            ),
            _section("lint", "Lint findings", n_lint, lint_body),
            _section("provenance", "Provenance", None, _provenance(review.manifest)),
        ]
    )
    common_link = '<a href="#common">Common words</a>' if common is not None else ""
    body = f"""
<header class="top">
  <div class="brand"><span class="mark" aria-hidden="true"></span>kgkit review</div>
  <h1>{_e(heading)}</h1>
  <p class="where">{_e(review.kind)} folder <code>{_e(str(review.path))}</code></p>
  <dl class="facts">{fact_html}</dl>
  {notes_html}
  <nav class="jump">
    <a href="#topics">Topics</a><a href="#changes">Changes</a><a href="#ambiguous">Ambiguous</a>
    {common_link}<a href="#dropped">Dropped</a><a href="#repairs">Repairs</a>
    <a href="#lint">Lint</a><a href="#charts">Charts</a><a href="#provenance">Provenance</a>
  </nav>
</header>
<main>
<section id="topics">
  <h2>Topics <span class="badge">{len(topics):,}</span></h2>
  <div class="searchbar">
    <input id="search" type="search" autocomplete="off" spellcheck="false"
      placeholder="Search labels and aliases…" aria-label="Search labels and aliases">
    <span id="search-status" role="status"></span>
    <button type="button" id="expand-all">unfold all</button>
    <button type="button" id="collapse-all">fold all</button>
  </div>
  <div class="split">
    <div id="tree" class="tree" role="tree"></div>
    <aside id="detail" class="detail" aria-live="polite">
      <p class="empty">Choose a topic to see its labels, aliases, parents and origin.</p>
    </aside>
  </div>
</section>
{sections}
<section id="charts"><h2>Charts</h2><div class="charts">{_charts(review)}</div></section>
</main>
<footer>Made by kgkit from the files of this folder; works offline.</footer>
"""
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en"><head><meta charset="utf-8">\n'
        '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f"<title>{_e(heading)} · kgkit review</title>\n"
        f"<style>\n{_asset('page.css')}</style>\n"
        "</head><body>\n"
        f"{body}\n"
        f'<script type="application/json" id="review-data">{_json_for_script(data)}</script>\n'
        f"<script>\n{_asset('page.js')}</script>\n"
        "</body></html>\n"
    )


def write_page(target: Path | str, output: Path | str, lint: bool = True) -> Path:
    """Write the review page of ``target`` to ``output`` (temporary file, then renamed)."""
    output = Path(output)
    page = render_page(load_review(target, lint=lint))
    output.parent.mkdir(parents=True, exist_ok=True)
    return write_text_atomic(output, page, "review page")

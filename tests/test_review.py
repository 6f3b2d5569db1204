"""The review page: self-contained, deterministic, escaped, and complete for release and build."""

from __future__ import annotations

import json
import re
import shutil
import xml.etree.ElementTree as ET
from html.parser import HTMLParser

import pytest

from kgkit.cli import cli
from kgkit.review import ReviewError, load_review, render_page, write_page
from kgkit.vocab.writers import BuildFileError


class _Scan(HTMLParser):
    """Collects what a self-contained page must not have, and its inline parts."""

    def __init__(self):
        super().__init__()
        self.outside: list[str] = []
        self.tags: list[str] = []
        self.svgs = 0
        self.data_json: str | None = None
        self._in_data = False

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        a = dict(attrs)
        if tag == "svg":
            self.svgs += 1
        if tag in ("link", "iframe", "img", "object", "embed"):
            self.outside.append(f"<{tag}>")
        for key in ("src", "href", "action"):
            value = a.get(key) or ""
            if re.match(r"^(https?:)?//", value):
                self.outside.append(f"{tag} {key}={value}")
        self._in_data = tag == "script" and a.get("id") == "review-data"

    def handle_data(self, data):
        if self._in_data:
            self.data_json = data

    def handle_endtag(self, tag):
        self._in_data = False


def test_release_page_is_self_contained_and_complete(demo_workspace):
    second = demo_workspace["releases"][1]
    page = demo_workspace["page"].read_text(encoding="utf-8")
    scan = _Scan()
    scan.feed(page)
    assert scan.outside == []  # no stylesheet, script, image or font from anywhere else
    assert "@import" not in page and "url(" not in page
    assert scan.tags.count("script") == 2 and scan.tags.count("style") == 1
    assert scan.svgs == 2  # topics by depth, label coverage by language
    data = json.loads(scan.data_json)
    ids = {t["id"] for t in data["topics"]}
    on_disk = {json.loads(x)["id"] for x in (second / "topics.jsonl").open(encoding="utf-8")}
    assert ids == on_disk
    for section in (
        "topics",
        "changes",
        "ambiguous",
        "dropped",
        "repairs",
        "lint",
        "charts",
        "provenance",
    ):
        assert f'<section id="{section}">' in page
    manifest = json.loads((second / "manifest.json").read_text(encoding="utf-8"))
    (source,) = manifest["sources"]
    for f in source["files"]:  # where it came from: each dump file, by name and hash
        assert f"{f['name']} <code>sha256 {f['sha256'][:16]}…</code>" in page
    assert manifest["content_sha256"] in page
    assert "<h1>tidewell 2.0.0</h1>" in page
    assert "Against <strong>1.0.0</strong>" in page
    # each topic by its label beside its id
    assert (
        "deprecated seaweed foraging (seaweed-foraging), replaced by shore foraging "
        "(shore-foraging)" in page
    )
    assert "<code>netting</code>" in page  # an ambiguous key
    assert 'data-topic="net-mending">net mending (net-mending)</a>' in page  # its topics
    assert "stop-topic" in page and "missing-language:en" in page  # dropped, with reasons
    assert "seaweed gathering" in page  # the stale curation edit


def test_charts_are_well_formed_svg_with_the_right_bars(demo_workspace):
    page = demo_workspace["page"].read_text(encoding="utf-8")
    svgs = re.findall(r"<svg .*?</svg>", page, flags=re.S)
    assert len(svgs) == 2
    trees = [ET.fromstring(s) for s in svgs]  # well-formed XML
    # the SVG namespace as the W3C SVG 1.1 Recommendation names it
    assert all(t.tag == "{http://www.w3.org/2000/svg}svg" for t in trees)
    topics = [
        json.loads(x)
        for x in (demo_workspace["releases"][1] / "topics.jsonl").open(encoding="utf-8")
    ]
    active = [t for t in topics if t["status"] == "active"]
    depths = sorted({t["depth"] for t in active})
    ns = "{http://www.w3.org/2000/svg}"
    bars = [r.find(f"{ns}title").text for r in trees[0].iter(f"{ns}rect")]
    expected = [f"depth {d}: {sum(t['depth'] == d for t in active):,}" for d in depths]
    assert bars == expected
    cover = {r.find(f"{ns}title").text.split(":")[0] for r in trees[1].iter(f"{ns}rect")}
    assert cover == {"en", "de", "untagged"}


def test_page_is_deterministic(demo_workspace, tmp_path):
    second = demo_workspace["releases"][1]
    a = write_page(second, tmp_path / "a.html")
    b = write_page(second, tmp_path / "b.html")
    assert a.read_bytes() == b.read_bytes()
    assert a.read_bytes() == demo_workspace["page"].read_bytes()


def test_build_page_compares_with_the_newest_release(demo_workspace):
    build = demo_workspace["root"] / "vocab" / "tidewell" / "build"
    review = load_review(build, lint=False)
    assert review.kind == "build" and review.version is None
    assert review.changelog["previous"] == "2.0.0"
    # the build is what 2.0.0 was made from (less, perhaps, the deprecated record a
    # release adds), compiled again at the demo's end with the lexicon rules and the edit
    # that settles 'netting' for net-mending (the alias preferred-only had taken from it)
    changes = {(c["kind"], c["topic"]) for c in review.changelog["changes"]}
    assert changes - {("removed", "seaweed-foraging")} == {("alias-added", "net-mending")}
    assert review.lint is None
    assert "<h1>tidewell (build)</h1>" in render_page(review)


@pytest.fixture
def hostile_build(demo_workspace, tmp_path):
    """A build whose labels try to break out of the page's markup and script."""
    src = demo_workspace["releases"][0]
    folder = tmp_path / "evil" / "build"
    folder.mkdir(parents=True)
    for name in ("report.json", "lexicon.tsv"):
        shutil.copy(src / name, folder / name)
    lines = (src / "topics.jsonl").read_text(encoding="utf-8").splitlines()
    t = json.loads(lines[0])
    t["labels"]["en"] = "</script><img src=x onerror=alert(1)> & <!-- co"
    lines[0] = json.dumps(t, ensure_ascii=False, sort_keys=True)
    (folder / "topics.jsonl").write_text("\n".join(lines) + "\n", encoding="utf-8")
    return folder, t


def test_hostile_labels_stay_data(hostile_build):
    folder, topic = hostile_build
    page = render_page(load_review(folder, lint=False))
    assert "</script><img" not in page and "<!-- co" not in page
    scan = _Scan()
    scan.feed(page)
    assert scan.outside == [] and "img" not in scan.tags
    data = json.loads(scan.data_json)
    (back,) = [t for t in data["topics"] if t["id"] == topic["id"]]
    assert back["labels"]["en"] == topic["labels"]["en"]


def test_bad_targets(tmp_path):
    with pytest.raises(ReviewError, match="not a release or build folder"):
        load_review(tmp_path)
    (tmp_path / "topics.jsonl").write_text('{"id": "a"}\nnot json\n', encoding="utf-8")
    with pytest.raises(BuildFileError, match=r"topics.jsonl:2: not a JSON object"):
        load_review(tmp_path)


def test_report_command(runner, demo_workspace, tmp_path):
    out = tmp_path / "deep" / "page.html"
    first = demo_workspace["releases"][0]
    res = runner.invoke(cli, ["review", str(first), "-o", str(out)])
    assert res.exit_code == 0, res.output
    assert res.output == f"review page written to {out} ({out.stat().st_size:,} bytes)\n"
    assert "First release: nothing to compare with." in out.read_text(encoding="utf-8")
    res = runner.invoke(cli, ["review", str(tmp_path), "-o", str(tmp_path / "x.html")])
    assert res.exit_code == 1
    assert res.output == (
        f"Error: {tmp_path}: not a release or build folder (no topics.jsonl in it)\n"
    )
    assert not (tmp_path / "x.html").exists()

"""Bad input that reaches kgkit from outside (files, arguments, YAML, JSON) ends in one
line naming the file, line and cause: never a traceback (issue 15, items 9 and 12).

Each test is named after the failure it triggers; the rows of a parametrised test are
the inputs that used to end in a traceback or pass silently.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import time
from pathlib import Path

import pytest

from kgkit.cli import cli
from kgkit.errors import InputError, ParameterError, SpecError, TemplateError, WorkspaceError
from kgkit.inputs import (
    MAX_INT_DIGITS,
    check_number,
    load_json,
    load_yaml,
    parse_int,
    read_text_file,
    read_yaml,
)
from kgkit.templates import list_templates
from kgkit.vocab.curation import load_curation
from kgkit.vocab.spec import load_spec
from kgkit.workspace import load_workspace

HUGE = "9" * 5000  # Python refuses to convert integers of over 4,300 digits
DEEP_BLOCK = "a:\n  " + "- " * 20_000 + "x\n"  # block lists nested 20,000 deep
DEEP_FLOW = "a: " + "[" * 20_000 + "]" * 20_000 + "\n"
# nine levels of nine aliases: 9**9 (387 million) strings once expanded
ALIAS_BOMB = "a0: &a0 [x, x, x, x, x, x, x, x, x]\n" + "".join(
    f"a{i}: &a{i} [{', '.join([f'*a{i - 1}'] * 9)}]\n" for i in range(1, 10)
)

SPEC = """\
name: sport
namespace: http://example.org/vocab/
select:
  - template: descendants
    params: {root: "<http://example.org/sport>"}
"""


def one_error_line(result) -> str:
    """The output of a failed command: exactly one line, starting with Error:."""
    lines = result.output.splitlines()
    assert result.exception is None or isinstance(result.exception, SystemExit), result.output
    assert len(lines) == 1 and lines[0].startswith("Error: "), result.output
    return lines[0]


# --- YAML: nesting, aliases, duplicate keys, numbers -----------------------------------


@pytest.mark.parametrize(
    "text, cause",
    [
        pytest.param(DEEP_BLOCK, "nested more than 64 levels deep", id="block-nested-20000"),
        pytest.param(DEEP_FLOW, "nesting", id="flow-nested-20000"),
        pytest.param(ALIAS_BOMB, "once its aliases are expanded", id="alias-bomb"),
        pytest.param("a: 1\nb: 2\na: 3\n", "key 'a' given twice (first on line 1)", id="dup-key"),
        pytest.param(f"a: {HUGE}\n", "an integer of 5000 digits is too long", id="huge-int"),
        pytest.param("a: .nan\n", "'.nan' is not a finite number", id="nan"),
        pytest.param("a: -.inf\n", "'-.inf' is not a finite number", id="inf"),
        pytest.param("a: 1.0e+999\n", "'1.0e+999' is not a finite number", id="float-overflow"),
        pytest.param("a: 1\n---\nb: 2\n", "more than one YAML document", id="two-documents"),
    ],
)
def test_yaml_beyond_limits_is_one_line(text, cause):
    start = time.monotonic()
    with pytest.raises(InputError) as err:
        load_yaml(text, "f.yaml")
    assert time.monotonic() - start < 5  # refused at once, never expanded
    msg = str(err.value)
    assert msg.startswith("f.yaml") and cause in msg and "\n" not in msg


def test_yaml_key_lines_and_shared_anchor_load():
    doc = load_yaml("a:\n  b: &x [1, 2]\n  c: *x\nl:\n  - k: v\n", "f.yaml")
    assert doc.data == {"a": {"b": [1, 2], "c": [1, 2]}, "l": [{"k": "v"}]}
    assert doc.lines["a.c"] == 3 and doc.lines["l[0].k"] == 5
    assert doc.line_of("l[0].k.deeper") == 5


# --- numbers and text --------------------------------------------------------------------


@pytest.mark.parametrize("text", [HUGE, "-" + HUGE, "1" * (MAX_INT_DIGITS + 1), "x1", ""])
def test_bad_integer_text_is_one_line(text):
    with pytest.raises(ParameterError) as err:
        parse_int(text, "n", error=ParameterError)
    assert str(err.value).startswith("n: ") and len(str(err.value)) < 200


@pytest.mark.parametrize(
    "value",
    [float("nan"), float("inf"), True, "1", 10**5000],
    ids=["nan", "inf", "bool", "text", "huge-int"],
)
def test_number_that_is_not_finite_is_refused(value):
    with pytest.raises(InputError):
        check_number(value, "min", InputError)


@pytest.mark.parametrize(
    "text, cause",
    [
        ("[" * 100_000 + "]" * 100_000, "nested more than 200 levels deep"),
        ('{"n": ' + HUGE + "}", "an integer of 5000 digits is too long"),
        ('{"n": NaN}', "NaN is not a JSON number"),
        ('{"n": Infinity}', "Infinity is not a JSON number"),
        ('{"n": 1', "f.json:1:8:"),
    ],
)
def test_json_beyond_limits_is_one_line(text, cause):
    with pytest.raises(InputError) as err:
        load_json(text, "f.json")
    assert cause in str(err.value) and "\n" not in str(err.value)


# --- files -------------------------------------------------------------------------------


def test_file_that_cannot_be_read_says_why(tmp_path):
    (tmp_path / "bad.yaml").write_bytes(b"a: 1\nb: caf\xe9\n")
    cases = {
        tmp_path / "missing.yaml": "missing.yaml: no such file",
        tmp_path: "is a folder, not a text file",
        Path("/dev/zero"): "/dev/zero: not a regular file",
        tmp_path / "bad.yaml": "bad.yaml:2:7: not UTF-8 text (byte \\xe9)",
    }
    for path, cause in cases.items():
        with pytest.raises(InputError) as err:
            read_text_file(path)
        assert cause in str(err.value)
    with pytest.raises(InputError, match="more than the 10 bytes"):
        read_text_file(tmp_path / "bad.yaml", max_bytes=10)
    (tmp_path / "bom.yaml").write_bytes(b"\xef\xbb\xbfa: 1\n")
    assert read_yaml(tmp_path / "bom.yaml").data == {"a": 1}


# --- kgkit.yaml ----------------------------------------------------------------------------


@pytest.mark.parametrize(
    "text, cause",
    [
        (DEEP_BLOCK, "nested more than 64 levels deep"),
        (f"store: x\nlanguages: [en]\nendpoint: {HUGE}\n", "5000 digits is too long"),
        ("store: a\nstore: b\n", "key 'store' given twice"),
        ("profile:\n  label: [skos:prefLabel>]\n", "the character '>' cannot be part of an IRI"),
        ('profile:\n  label: ["skos:pref Label"]\n', "neither an IRI"),
    ],
    ids=["nested-20000", "huge-int", "dup-key", "predicate-with-bracket", "predicate-with-space"],
)
def test_bad_workspace_file_is_one_line(tmp_path, runner, text, cause):
    (tmp_path / "kgkit.yaml").write_text(text, encoding="utf-8")
    with pytest.raises(WorkspaceError) as err:
        load_workspace(tmp_path)
    assert cause in str(err.value)
    r = runner.invoke(cli, ["--workspace", str(tmp_path), "templates"])
    assert r.exit_code == 1 and cause in one_error_line(r)


def test_profile_predicate_with_bracket_is_refused_at_load_not_at_find(workspace, runner):
    path = workspace.root / "kgkit.yaml"
    text = path.read_text(encoding="utf-8")
    path.write_text(text.replace("label: [skos:prefLabel,", "label: [skos:prefLabel>,"))
    r = runner.invoke(cli, ["--workspace", str(workspace.root), "find", "x"])
    line = one_error_line(r)
    assert "kgkit.yaml: key 'profile.label'" in line and "'>'" in line


# --- specs and curation files --------------------------------------------------------------


def write_spec(ws, extra: str = "", text: str = SPEC) -> Path:
    path = ws.vocab_dir / "sport.yaml"
    path.write_text(text + extra, encoding="utf-8")
    return path


@pytest.mark.parametrize(
    "extra, cause",
    [
        ("prune: {max_depth: " + HUGE + "}\n", "sport.yaml:6: an integer of 5000 digits"),
        ("prune: {max_depth: 10000000000000}\n", "must be an integer <= 1000000000000"),
        ("prune: {max_depth: .nan}\n", "sport.yaml:6: '.nan' is not a finite number"),
        (
            "prune:\n  min_popularity: {template: descendants, params: {root: x}, min: .inf}\n",
            "sport.yaml:7: '.inf' is not a finite number",
        ),
        ("name: other\n", "sport.yaml:6: key 'name' given twice (first on line 1)"),
        ("aliases:\n" + ALIAS_BOMB.replace("\na", "\n  a").replace("a0", "  a0", 1), "expanded"),
        ("prune:\n" + DEEP_BLOCK.replace("\n", "\n  ", 2000), "nested more than 64 levels deep"),
        ("curation: .\n", "sport.yaml:6: key 'curation':"),
        ("curation: /dev/zero\n", "sport.yaml:6: key 'curation': /dev/zero is not a regular file"),
        ("curation: nowhere.yaml\n", "sport.yaml:6: key 'curation': no such curation file"),
    ],
    ids=[
        "huge-int",
        "int-beyond-rule-bound",
        "nan",
        "inf",
        "dup-key",
        "alias-bomb",
        "nested-20000",
        "curation-is-a-folder",
        "curation-is-a-device",
        "curation-missing",
    ],
)
def test_bad_spec_is_one_line_naming_its_line(workspace, extra, cause):
    path = write_spec(workspace, extra)
    start = time.monotonic()
    with pytest.raises(SpecError) as err:
        load_spec(workspace, path)
    assert time.monotonic() - start < 5
    assert cause in str(err.value) and "\n" not in str(err.value)


@pytest.mark.parametrize(
    "text, cause",
    [
        (DEEP_BLOCK, "nested more than 64 levels deep"),
        ("edits:\n" + ALIAS_BOMB.replace("a0:", "  - a0:", 1), "expanded"),
        ("edits: []\nedits: []\n", "c.yaml:2: key 'edits' given twice"),
        (
            "edits:\n  - add_alias: {topic: a, alias: b, alias: c}\n",
            "c.yaml:2: key 'alias' given twice",
        ),
    ],
    ids=["nested-20000", "alias-bomb", "dup-key", "dup-field"],
)
def test_bad_curation_file_is_one_line(tmp_path, text, cause):
    path = tmp_path / "c.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(SpecError) as err:
        load_curation(path)
    assert cause in str(err.value) and "\n" not in str(err.value)


def test_curation_file_that_is_a_folder_or_device_is_refused(tmp_path):
    with pytest.raises(SpecError, match="is a folder"):
        load_curation(tmp_path)
    with pytest.raises(SpecError, match="not a regular file"):
        load_curation(Path("/dev/zero"))


# --- command-line arguments ----------------------------------------------------------------


@pytest.mark.parametrize(
    "args, name",
    [
        (["query", "SELECT * WHERE { ?s ?p 'caf\udce9' }"], "'[SPARQL]'"),
        (["run", "descendants", "-p", "root=\udcff"], "'--param'"),
        (["show", "\udcff"], "'TERM'"),
        (["find", "caf\udce9"], "'TEXT'"),
        (["tree", "\udcff"], "'TERM'"),
        (["probe", ".", "caf\udce9"], "'[TEXT]'"),
    ],
    ids=["query", "run-p", "show", "find", "tree", "probe"],
)
def test_argument_that_is_not_utf8_is_a_usage_error(kgkit, args, name):
    r = kgkit(*args)
    assert r.exit_code == 2, r.output
    last = r.output.splitlines()[-1]
    assert last.startswith(f"Error: Invalid value for {name}")
    assert "not UTF-8 text (byte \\x" in last


def test_integer_parameter_over_4300_digits_is_one_line(kgkit):
    r = kgkit("run", "descendants", "-p", "root=<http://example.org/a>", "-p", f"max_depth={HUGE}")
    assert r.exit_code == 1
    assert "max_depth' (integer): an integer of 5000 digits is too long" in one_error_line(r)


def test_control_characters_in_a_message_are_shown_escaped(kgkit, workspace):
    bad = workspace.root / "sp\x85ec\u2028x\x0b.yaml"
    bad.write_text("name: [\n", encoding="utf-8")
    r = kgkit("compile", str(bad))
    line = one_error_line(r)
    assert "sp\\x85ec\\u2028x\\x0b.yaml" in line


def test_library_parameter_names_become_flags_on_the_command_line(kgkit):
    r = kgkit("query", "DELETE WHERE { ?s ?p ?o }")
    assert one_error_line(r).endswith("refused (give --allow-update to run it)")
    r = kgkit("query", "CONSTRUCT WHERE { ?s ?p ?o }", "--format", "json")
    assert "--format json is for SELECT and ASK results" in one_error_line(r)
    assert "--format nt or --format ttl" in r.output


def test_debug_reraises_the_error(runner, tmp_path):
    (tmp_path / "kgkit.yaml").write_text("a: 1\na: 2\n", encoding="utf-8")
    r = runner.invoke(cli, ["--workspace", str(tmp_path), "--debug", "templates"])
    assert isinstance(r.exception, WorkspaceError)


# --- templates folder ------------------------------------------------------------------------


def test_template_that_is_not_utf8_names_its_line(workspace):
    (workspace.queries_dir / "x.rq").write_bytes(b"#: about x\nSELECT * WHERE { ?s ?p '\xff' }\n")
    with pytest.raises(TemplateError, match=r"x.rq:2:\d+: not UTF-8 text"):
        list_templates(workspace)


# --- permissions (as an unprivileged user when the tests run as root) -------------------------


def _run_unprivileged(args: list[str], cwd: Path) -> subprocess.CompletedProcess:
    """Run kgkit in a child process that permission bits apply to (as root: without the
    capabilities that override them)."""
    prefix = []
    if os.geteuid() == 0:
        setpriv = shutil.which("setpriv")
        if setpriv is None:
            pytest.skip("running as root and setpriv (util-linux) is not installed")
        prefix = [setpriv, "--bounding-set", "-dac_override,-dac_read_search"]
    return subprocess.run(
        [*prefix, sys.executable, "-m", "kgkit", *args],
        cwd=cwd,
        capture_output=True,
        text=True,
        errors="replace",
        timeout=60,
    )


@pytest.fixture
def open_workspace(workspace):
    """A workspace with a spec, a curation file and a template of its own."""
    write_spec(workspace)
    (workspace.vocab_dir / "sport.curation.yaml").write_text("edits: []\n", encoding="utf-8")
    (workspace.queries_dir / "mine.rq").write_text(
        "#: about mine\nSELECT ?s WHERE { ?s ?p ?o }\n", encoding="utf-8"
    )
    yield workspace
    for dirpath, _, _ in os.walk(workspace.root):
        os.chmod(dirpath, 0o755)


@pytest.mark.parametrize(
    "target, args, cause",
    [
        ("kgkit.yaml", ["templates"], "kgkit.yaml: cannot read (permission denied)"),
        ("queries/mine.rq", ["templates"], "mine.rq: cannot read (permission denied)"),
        ("queries", ["templates"], "queries: cannot list (permission denied)"),
        (
            "vocab/sport.curation.yaml",
            ["compile", "vocab/sport.yaml"],
            "sport.curation.yaml: cannot read (permission denied)",
        ),
    ],
    ids=["workspace-file", "template", "queries-folder", "curation-file"],
)
def test_unreadable_input_is_one_line(open_workspace, target, args, cause):
    path = open_workspace.root / target
    os.chmod(path, 0)
    r = _run_unprivileged(args, open_workspace.root)
    assert r.returncode == 1, r.stderr
    assert r.stderr.splitlines() == [f"Error: {path if '/' in cause else ''}{cause}"] or (
        len(r.stderr.splitlines()) == 1 and cause in r.stderr
    ), r.stderr


def test_unwritable_store_lock_is_one_line(open_workspace):
    lock = open_workspace.store_path.with_name("store.lock")
    lock.unlink(missing_ok=True)
    os.chmod(lock.parent, 0o555)
    r = _run_unprivileged(["query", "ASK { ?s ?p ?o }"], open_workspace.root)
    assert r.returncode == 1
    assert r.stderr.splitlines() == [f"Error: {lock}: permission denied"], r.stderr


def test_release_version_over_4300_digits_is_one_line():
    from kgkit.errors import VersionError
    from kgkit.release.versioning import Version

    with pytest.raises(VersionError) as err:
        Version.parse("1.2." + HUGE)
    assert "is not a release version" in str(err.value) and len(str(err.value)) < 200


def test_parse_error_hint_names_the_flag_on_the_command_line(kgkit, tmp_path):
    bad = tmp_path / "bad.nt"
    bad.write_text("<http://example.org/a> <http://example.org/b> .\n", encoding="utf-8")
    r = kgkit("import", str(bad), "--graph", "g")
    assert one_error_line(r).endswith("; run with --on-error skip to set bad statements aside")


# --- 20,000 curation edits ---------------------------------------------------------------


class _CountingLinks(dict):
    """graph_parents that counts full scans (each merge used to scan every link)."""

    scans = 0

    def items(self):
        type(self).scans += 1
        return super().items()


def test_many_merges_do_not_scan_every_parent_link_each():
    from kgkit.vocab.curation import Edit, apply_curation
    from kgkit.vocab.model import Topic

    topics = {f"t{i}": Topic(id=f"t{i}", source=None) for i in range(200)}
    for t in topics.values():
        t.labels.append(("en", t.id, 0))
    links = _CountingLinks({f"t{i}": [f"t{i // 2}"] if i else [] for i in range(200)})
    links.update({f"http://x/e{j}": [f"t{j % 200}"] for j in range(1000)})
    edits = [
        Edit(k, None, "merge", {"topic": f"t{199 - k}", "into": "t0"}, None) for k in range(50)
    ]
    res = apply_curation(edits, topics, links, lambda r: r, lambda t: {})
    assert len(res.applied) == 50 and res.merged["t199"] == "t0"
    assert _CountingLinks.scans <= 1  # one index made at the first merge, then kept
    # the merged topics' children now hang under t0, none under a merged topic
    assert all(not set(ps) & set(res.merged) for ps in links.values())
    assert links["t150"] == [] and "t0" in links["http://x/e199"]


# --- report.json and topics.jsonl of a vocabulary folder -----------------------------------


def _corrupt_copy(demo_workspace, tmp_path, name: str, change) -> Path:
    import json
    import shutil

    folder = tmp_path / "copy"
    shutil.copytree(demo_workspace["releases"][-1], folder)
    path = folder / name
    if name == "report.json":
        data = json.loads(path.read_text(encoding="utf-8"))
        path.write_text(json.dumps(change(data)), encoding="utf-8")
    else:
        lines = path.read_text(encoding="utf-8").splitlines()
        lines[1] = json.dumps(change(json.loads(lines[1])))
        path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return folder


@pytest.mark.parametrize(
    "name, change, cause",
    [
        ("report.json", lambda d: [1, 2], "JSON object"),
        ("report.json", lambda d: {**d, "curation": 5}, "'curation' must be an object or null"),
        ("report.json", lambda d: {**d, "ambiguous": ["x"]}, "'ambiguous[0]' must be an object"),
        ("report.json", lambda d: {**d, "counts": "x"}, "'counts' must be an object or null"),
        ("topics.jsonl", lambda t: {**t, "labels": {"en": 5}}, "'labels.en' must be text"),
        ("topics.jsonl", lambda t: {**t, "parents": "x"}, "'parents' must be a list or null"),
        ("topics.jsonl", lambda t: {**t, "depth": "2"}, "'depth' must be an integer or null"),
    ],
    ids=[
        "report-is-a-list",
        "report-curation-int",
        "report-ambiguous-text",
        "report-counts-text",
        "topic-label-int",
        "topic-parents-text",
        "topic-depth-text",
    ],
)
def test_vocabulary_folder_with_wrong_typed_fields_is_one_line(
    demo_workspace, tmp_path, runner, name, change, cause
):
    folder = _corrupt_copy(demo_workspace, tmp_path, name, change)
    first = demo_workspace["releases"][0]
    page = str(tmp_path / "p.html")
    for args in (["diff", str(first), str(folder)], ["review", str(folder), "-o", page]):
        r = runner.invoke(cli, args)
        assert r.exit_code == 1
        line = one_error_line(r)
        assert str(folder / name) in line and cause in line


@pytest.fixture
def demo_copy(demo_workspace, tmp_path):
    """A copy of the demo workspace (compiled, released, with its corpus)."""
    root = tmp_path / "demo"
    shutil.copytree(demo_workspace["root"], root)
    yield root
    for dirpath, _, filenames in os.walk(root):
        os.chmod(dirpath, 0o755)
        for f in filenames:
            os.chmod(os.path.join(dirpath, f), 0o644)


@pytest.mark.parametrize(
    "target, mode, args, cause",
    [
        ("corpus/article-001.txt", 0, ["probe", "RELEASE", "--corpus", "corpus"], "cannot read"),
        ("RELEASE/lexicon.tsv", 0, ["probe", "RELEASE", "canoe"], "permission denied"),
        ("RELEASE/manifest.json", 0, ["verify", "RELEASE"], "manifest.json: cannot be read"),
        ("vocab/tidewell", 0o555, ["compile", "vocab/tidewell.yaml"], "permission denied"),
        ("out", 0o555, ["review", "RELEASE", "-o", "out/page.html"], "permission denied"),
    ],
    ids=["corpus-file", "release-file", "manifest", "vocab-name-folder", "review-output-folder"],
)
def test_unreadable_or_unwritable_demo_path_is_one_line(demo_copy, target, mode, args, cause):
    release = next(
        p for p in sorted((demo_copy / "vocab" / "tidewell").iterdir()) if p.name[0] == "1"
    )
    rel = str(release.relative_to(demo_copy))
    path = demo_copy / target.replace("RELEASE", rel)
    if target == "out":
        path.mkdir()
    os.chmod(path, mode)
    r = _run_unprivileged([a.replace("RELEASE", rel) for a in args], demo_copy)
    lines = r.stderr.splitlines()
    assert r.returncode == 1 and len(lines) == 1 and lines[0].startswith("Error: "), r.stderr
    assert cause in lines[0]


def test_unwritable_shell_history_warns_once_and_the_shell_goes_on(demo_copy):
    history = demo_copy / ".kgkit" / "shell-history"
    history.parent.mkdir(exist_ok=True)
    history.write_text("", encoding="utf-8")
    os.chmod(history, 0o444)
    prefix = []
    if os.geteuid() == 0:
        prefix = ["setpriv", "--bounding-set", "-dac_override,-dac_read_search"]
    r = subprocess.run(
        [*prefix, sys.executable, "-m", "kgkit", "shell"],
        cwd=demo_copy,
        input="ASK { ?s ?p ?o };\nASK { ?s ?p ?o };\n",
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert r.returncode == 0, r.stderr
    assert r.stdout.count("true") == 2
    assert r.stderr.splitlines() == [
        f"Warning: {history}: cannot write (permission denied); history is not kept"
    ]


@pytest.mark.parametrize(
    "text, cause",
    [
        ('{"files": {}, "version": ' + HUGE + "}", "an integer of 5000 digits is too long"),
        ("[" * 100_000 + "]" * 100_000, "nested more than 200 levels deep"),
        ('{"files": {}, "bytes": NaN}', "NaN is not a JSON number"),
    ],
    ids=["huge-int", "nested-100000", "nan"],
)
def test_bad_manifest_json_is_one_line(tmp_path, text, cause):
    from kgkit.errors import ManifestError
    from kgkit.release.manifest import read_manifest

    (tmp_path / "manifest.json").write_text(text, encoding="utf-8")
    with pytest.raises(ManifestError) as err:
        read_manifest(tmp_path)
    assert cause in str(err.value) and "manifest.json" in str(err.value)


@pytest.mark.parametrize(
    "args, cause",
    [
        (["find", "x", "--limit", "9" * 30], "'--limit': must be at most 9223372036854775807"),
        (["query", "--timeout", "nan", "ASK {}"], "'--timeout': nan is not a finite number"),
        (["query", "--timeout", "inf", "ASK {}"], "'--timeout': inf is not a finite number"),
    ],
    ids=["int-beyond-64-bits", "nan", "inf"],
)
def test_number_option_out_of_bounds_is_a_usage_error(kgkit, args, cause):
    r = kgkit(*args)
    assert r.exit_code == 2 and r.output.splitlines()[-1] == f"Error: Invalid value for {cause}"


@pytest.mark.parametrize("languages", ["en,d e", "en]", "en,#x"])
def test_init_with_a_bad_language_writes_nothing(runner, tmp_path, languages):
    r = runner.invoke(cli, ["init", str(tmp_path / "w"), "--languages", languages])
    assert r.exit_code == 2 and "--languages: " in one_error_line(r)
    assert not (tmp_path / "w").exists()


@pytest.mark.parametrize(
    "header, cause",
    [
        ("#: param n integer = abc", "t.rq:1: default: must be an integer, got 'abc'"),
        ("#: param n integer = " + HUGE, "t.rq:1: default: an integer of 5000 digits"),
        ("#: param n literal = z one of a,b", "t.rq:1: default 'z' is not one of its choices"),
    ],
    ids=["integer-default-text", "integer-default-huge", "default-not-a-choice"],
)
def test_template_default_that_can_never_bind_is_refused_at_load(header, cause):
    from kgkit.templates import parse_template

    with pytest.raises(TemplateError) as err:
        parse_template(header + "\nSELECT ?n WHERE { ?n ?p ?o }\n", "t", "t.rq")
    assert str(err.value).startswith(cause)


def test_shell_line_that_is_not_utf8_is_one_error_and_the_shell_goes_on(workspace):
    from kgkit.query import connect
    from kgkit.shell import Shell

    lines = iter(["SELECT * WHERE { ?s ?p 'caf\udce9' };", "ASK {};"])
    out: list[str] = []
    with connect(workspace) as backend:
        Shell(backend, lambda prompt: next(lines, None), out.append).loop()
    text = "".join(out)
    assert "Error: this line: not UTF-8 text (byte \\xe9 at position 28)\n" in text
    assert text.endswith("true\n")


def test_query_text_that_is_not_utf8_is_a_query_error(workspace):
    from kgkit.errors import QueryError
    from kgkit.query import connect, run_query

    with connect(workspace) as backend, pytest.raises(QueryError, match="query: not UTF-8"):
        run_query(backend, "ASK { ?s ?p '\udcff' }")


# --- a seeded fuzz over the YAML files kgkit reads ---------------------------------------

_FUZZ_TOKENS = [
    "\n",
    " ",
    "- ",
    ": ",
    "{",
    "}",
    "[",
    "]",
    "&a ",
    "*a",
    "<<: ",
    "!!int ",
    "!!float ",
    "!!timestamp ",
    "!!binary ",
    "!!python/object ",
    "'",
    '"',
    "#",
    "\t",
    "\x85",
    "\u2028",
    "~",
    ".nan",
    "9" * 50,
    "-1",
    "1.5",
    "yes",
    "2020-13-45",
    "\udcff",
    "\ufeff",
    "? ",
    "|",
    ">",
    "---\n",
    "%YAML 1.1\n",
    "!x ",
    "\x00",
    "é",
]


def test_mutated_workspace_spec_and_curation_files_never_give_a_traceback(workspace):
    """300 seeded mutations of kgkit.yaml, the demo spec and a curation file: each one
    loads or is refused with one KgkitError line, never another exception."""
    import random
    from importlib import resources

    files = {
        "kgkit.yaml": (workspace.root / "kgkit.yaml").read_text(encoding="utf-8"),
        "spec": resources.files("kgkit.demo").joinpath("tidewell.yaml").read_text("utf-8"),
        "curation": resources.files("kgkit.demo")
        .joinpath("curation-start.yaml")
        .read_text("utf-8"),
    }
    other = workspace.root / "other"
    other.mkdir()
    rng = random.Random(15)
    for _ in range(300):
        kind = rng.choice(sorted(files))
        base = files[kind]
        text = list(base)
        for _ in range(rng.randint(1, 6)):
            pos = rng.randrange(len(text) + 1)
            op = rng.random()
            if op < 0.5:
                text.insert(pos, rng.choice(_FUZZ_TOKENS))
            elif op < 0.8:
                del text[pos : pos + rng.randint(1, 20)]
            else:
                text[pos:pos] = list(base[rng.randrange(len(base)) :][: rng.randint(1, 60)])
        data = "".join(text).encode("utf-8", "surrogateescape")
        try:
            if kind == "kgkit.yaml":
                (other / "kgkit.yaml").write_bytes(data)
                load_workspace(other)
            elif kind == "spec":
                (workspace.vocab_dir / "t.yaml").write_bytes(data)
                load_spec(workspace, workspace.vocab_dir / "t.yaml")
            else:
                (workspace.vocab_dir / "t.curation.yaml").write_bytes(data)
                load_curation(workspace.vocab_dir / "t.curation.yaml")
        except (WorkspaceError, SpecError) as exc:
            assert "\n" not in str(exc), (kind, data[:200])


@pytest.mark.parametrize(
    "line",
    [
        '{"id": "a", "depth": ' + HUGE + "}",
        '{"id": "a", "x": ' + "[" * 100_000 + "]" * 100_000 + "}",
    ],
    ids=["huge-int", "nested-100000"],
)
def test_topic_line_beyond_limits_is_one_line(line):
    from kgkit.errors import BuildFileError
    from kgkit.vocab.folder import parse_topics

    with pytest.raises(BuildFileError, match=r"^t.jsonl:2: not a topic"):
        parse_topics(['{"id": "z"}', line], "t.jsonl")

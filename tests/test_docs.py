"""Every command is documented: help that reads whole, a section in docs/commands.md
naming every option, command lines in the docs that parse, demo output quoted as printed."""

from __future__ import annotations

import json
import re
import shlex

import click
import pytest
from conftest import ROOT

from kgkit.cli import cli

README = (ROOT / "README.md").read_text(encoding="utf-8")
DOC_FILES = sorted((ROOT / "docs").glob("*.md"))
DOCS = {p.name: p.read_text(encoding="utf-8") for p in DOC_FILES}
COMMANDS_PAGE = DOCS.get("commands.md", "")
COMMANDS = sorted(cli.list_commands(click.Context(cli)))


def _code_lines(text: str) -> list[str]:
    """The lines of the shell code blocks that run kgkit (after a pipe, too)."""
    out = []
    for block in re.findall(r"```(?:bash|sh|shell)\n(.*?)```", text, flags=re.S):
        block = re.sub(r"\\\n\s*", " ", block)  # continued lines
        for line in block.splitlines():
            for part in line.split("|"):
                part = part.strip()
                if part.startswith("kgkit "):
                    out.append(part)
                elif ".venv/bin/kgkit " in part:
                    out.append("kgkit " + part.split(".venv/bin/kgkit ", 1)[1])
    return out


def _command_of(line: str) -> tuple[str, list[str]]:
    """Parse a documented line as the kgkit command line would; returns (command, its args)."""
    args = shlex.split(line, comments=True)[1:]
    ctx = cli.make_context("kgkit", list(args), resilient_parsing=False)
    # the sub-command and its arguments (click 8.2 renamed protected_args to _protected_args)
    protected = getattr(ctx, "_protected_args", None)
    if protected is None:
        protected = ctx.protected_args
    rest = list(protected) + list(ctx.args)
    name, command, sub_args = cli.resolve_command(ctx, rest)
    try:
        command.make_context(name, list(sub_args), parent=ctx)
    except click.MissingParameter:
        raise
    except click.BadParameter:
        pass  # the option exists and took its value, a file that exists only in the example
    return name, sub_args


#: page (README.md, docs/NAME.md) -> its kgkit command lines
PAGES = {"README.md": README, **{f"docs/{name}": text for name, text in DOCS.items()}}
LINES = {page: _code_lines(text) for page, text in PAGES.items()}
ALL_LINES = [(page, line) for page, lines in LINES.items() for line in lines]


def _section(name: str) -> str:
    """The `## kgkit NAME` section of docs/commands.md ('' when there is none)."""
    parts = re.split(r"^## ", COMMANDS_PAGE, flags=re.M)
    return next((p for p in parts if p.split("\n", 1)[0].strip() == f"kgkit {name}"), "")


def test_the_reference_pages_exist():
    assert "commands.md" in DOCS and len(DOCS) >= 10


@pytest.mark.parametrize("name", COMMANDS)
def test_every_command_has_help_text(name, runner):
    command = cli.get_command(click.Context(cli), name)
    assert (command.help or "").strip(), f"`kgkit {name}` has no help text"
    res = runner.invoke(cli, [name, "--help"])
    assert res.exit_code == 0 and res.output.startswith("Usage: ")
    assert f" {name} " in res.output.splitlines()[0]
    for param in command.params:
        if isinstance(param, click.Option):
            assert (param.help or "").strip(), f"`kgkit {name} {param.opts[0]}` has no help"


def test_every_short_help_reads_whole_in_the_command_list(runner):
    # click cuts a summary that does not fit and ends it with "..."
    res = runner.invoke(cli, ["--help"], terminal_width=80)
    listing = res.output.split("Commands:", 1)[1]
    cut = [line.strip() for line in listing.splitlines() if line.rstrip().endswith("...")]
    assert cut == []


@pytest.mark.parametrize("name", COMMANDS)
def test_every_command_has_a_section_in_the_command_reference(name):
    section = _section(name)
    assert section, f"docs/commands.md has no '## kgkit {name}' section"
    used = []
    for line in _code_lines(section):
        try:
            cmd, _args = _command_of(line)
        except click.UsageError:
            continue
        if cmd == name:
            used.append(line)
    assert used, f"docs/commands.md shows no working `kgkit {name} ...` line"
    assert re.search(rf"^\| `{re.escape(name)}` \|", COMMANDS_PAGE, flags=re.M), name


@pytest.mark.parametrize("name", COMMANDS)
def test_every_option_is_named_in_the_command_reference(name):
    command = cli.get_command(click.Context(cli), name)
    section = _section(name)
    missing = [
        param.opts[0]
        for param in command.params
        if isinstance(param, click.Option)
        and not param.hidden
        and not any(f"`{opt}" in section for opt in param.opts if opt.startswith("--"))
    ]
    assert missing == [], f"docs/commands.md, kgkit {name}: options not described"


def test_the_docs_show_command_lines():
    assert len(ALL_LINES) > 2 * len(COMMANDS)
    assert len(LINES["README.md"]) > 15  # the tour's examples


@pytest.mark.parametrize("page", sorted(LINES))
def test_every_documented_command_line_parses(page):
    bad = []
    for line in LINES[page]:
        try:
            _command_of(line)
        except click.UsageError as exc:
            bad.append(f"{line}: {exc.format_message()}")
    assert bad == []


@pytest.mark.parametrize("page", sorted(PAGES))
def test_every_link_between_pages_leads_to_a_file(page):
    folder = (ROOT / page).parent
    text = PAGES[page]
    targets = re.findall(r"\]\(([^)#\s]+)(?:#[^)]*)?\)", text)
    missing = [t for t in targets if "://" not in t and not (folder / t).exists()]
    assert missing == []


def test_the_readme_links_every_reference_page_once():
    section = README.split("\n## Reference\n", 1)[1].split("\n## ", 1)[0]
    links = re.findall(r"\]\((docs/[^)]+)\)", section)
    assert sorted(links) == sorted(set(links))
    assert sorted(set(links)) == sorted(f"docs/{name}" for name in DOCS if name != "README.md")


def _quoted(text: str, lang: str = "text") -> list[str]:
    return [
        line.strip()
        for block in re.findall(rf"```{lang}\n(.*?)```", text, flags=re.S)
        for line in block.splitlines()
        if line.strip() and line.strip() != "..."
    ]


#: Commands that only read; the docs' lines for them are run in the demo workspace.
READ_ONLY = {"graphs", "query", "templates", "run", "show", "find", "tree", "verify", "diff"}
READ_ONLY |= {"lint", "probe"}


def _missing(quoted: list[str], printed: list[str]) -> list[str]:
    missing = []
    for line in quoted:
        if line.endswith("..."):  # shortened in the docs: the start must match
            if not any(p.startswith(line[:-3].rstrip()) for p in printed):
                missing.append(line)
        elif line not in printed:
            missing.append(line)
    return missing


def test_quoted_output_is_real_output(runner, tmp_path, monkeypatch):
    # every line the docs quote as output (README.md, docs/demo.md, docs/probe.md) is a
    # line the demo, or a documented command run in the demo's workspace, really prints
    monkeypatch.chdir(tmp_path)  # the docs run it as `kgkit demo demo-workspace`
    res = runner.invoke(cli, ["demo", "demo-workspace"])
    assert res.exit_code == 0, res.output
    printed = [line.strip() for line in res.output.splitlines()]
    section = README.split("\n## What the demo shows\n", 1)[1].split("\n## ", 1)[0]
    demo_quotes = _quoted(section) + _quoted(DOCS["demo.md"])
    assert len(demo_quotes) > 30
    steps = [p for p in printed if re.match(r"\d+\. ", p)]
    words = "one two three four five six seven eight nine ten eleven twelve thirteen fourteen"
    words += " fifteen sixteen seventeen eighteen nineteen twenty"
    assert f"In {words.split()[len(steps) - 1]} steps" in section  # the README counts them
    assert _missing(demo_quotes, printed) == []

    monkeypatch.chdir(tmp_path / "demo-workspace")
    ran = 0
    for line in LINES["README.md"] + LINES["docs/probe.md"]:
        args = shlex.split(line, comments=True)[1:]
        if args and args[0] in READ_ONLY:
            out = runner.invoke(cli, args)
            ran += out.exit_code == 0
            printed += [x.strip() for x in out.output.splitlines()]
    assert ran >= 10
    quoted = _quoted(README) + _quoted(DOCS["probe.md"])
    assert _missing(quoted, printed) == []


def test_quoted_lexicon_rows_are_real_rows(tmp_path, monkeypatch, runner):
    monkeypatch.chdir(tmp_path)
    assert runner.invoke(cli, ["demo", "demo-workspace"]).exit_code == 0
    lexicon = tmp_path / "demo-workspace" / "vocab" / "tidewell" / "2.0.0" / "lexicon.tsv"
    rows = lexicon.read_text(encoding="utf-8").splitlines()
    quoted = [
        line
        for block in re.findall(r"```tsv\n(.*?)```", DOCS["lexicon.md"], flags=re.S)
        for line in block.splitlines()
    ]
    assert len(quoted) > 2 and quoted[0] == rows[0]
    assert [q for q in quoted if q not in rows] == []


# --- every file format's names are documented on its page ------------------------------


def _mapping_keys(source: str) -> dict[str, tuple[str, ...]]:
    """``section -> keys`` of the spec reader's ``c.mapping(..., "section", (keys))`` calls."""
    out = {}
    pattern = r'c\.mapping\(\s*[^,]+,\s*"(\w+)",\s*\(([^)]*)\),?\s*\)'
    for section, keys in re.findall(pattern, source, flags=re.S):
        out[section] = tuple(re.findall(r'"(\w+)"', keys))
    return out


def test_every_spec_key_is_documented():
    import kgkit.vocab.spec as spec

    page = DOCS["spec.md"]
    missing = [k for k in spec.TOP_KEYS if f"`{k}`" not in page and f"`{k}." not in page]
    nested = _mapping_keys((ROOT / "kgkit" / "vocab" / "spec.py").read_text(encoding="utf-8"))
    assert {"languages", "aliases", "prune"} <= set(nested)
    for section, keys in nested.items():
        if section in spec.TOP_KEYS:
            missing += [f"{section}.{k}" for k in keys if f"`{section}.{k}`" not in page]
    missing += [f for f in spec.OUTPUTS.values() if f"`{f}`" not in page]
    assert missing == [], "docs/spec.md does not describe these spec keys or files"


def test_every_workspace_key_is_documented():
    from kgkit.workspace import CONFIG_KEYS, GRAPH_KEYS

    page = DOCS["workspace.md"]
    missing = [k for k in (*CONFIG_KEYS, *GRAPH_KEYS) if f"`{k}`" not in page]
    assert missing == [], "docs/workspace.md does not describe these kgkit.yaml keys"


def test_every_curation_action_is_documented():
    from kgkit.vocab.curation import ACTIONS

    page = DOCS["curation.md"]
    assert [a for a in ACTIONS if f"{a}:" not in page and f"`{a}`" not in page] == []


def test_every_builtin_template_and_lint_check_is_documented():
    from kgkit.release.lint import CHECKS

    names = sorted(p.stem for p in (ROOT / "kgkit" / "queries").glob("*.rq"))
    assert [n for n in names if f"| `{n}` |" not in DOCS["templates.md"]] == []
    assert [c.name for c in CHECKS if f"| `{c.name}` |" not in DOCS["lint.md"]] == []


# --- the docs' file examples are valid files -----------------------------------------


def _blocks(page: str, lang: str) -> list[str]:
    return re.findall(rf"```{lang}\n(.*?)```", DOCS[page], flags=re.S)


@pytest.fixture
def tw_workspace(tmp_path, runner):
    """A fresh workspace that knows the docs' prefix tw: (the demo's)."""
    res = runner.invoke(cli, ["init", str(tmp_path / "ws")])
    assert res.exit_code == 0, res.output
    conf = tmp_path / "ws" / "kgkit.yaml"
    text = conf.read_text(encoding="utf-8")
    conf.write_text(
        text.replace("prefixes:\n", "prefixes:\n  tw:   http://demo.kgkit.invalid/e/\n", 1),
        encoding="utf-8",
    )
    return tmp_path / "ws"


def test_the_entity_record_example_imports(tw_workspace, runner):
    (example,) = _blocks("entity-records.md", "json")
    line = json.dumps(json.loads(example), ensure_ascii=False)  # a file holds one per line
    (tw_workspace / "one.jsonl").write_text(line + "\n", encoding="utf-8")
    ws = ["--workspace", str(tw_workspace)]
    res = runner.invoke(cli, [*ws, "import", str(tw_workspace / "one.jsonl"), "--json"])
    assert res.exit_code == 0, res.output
    summary = json.loads(res.output.strip().splitlines()[-1])
    assert summary["rejected"] == 0 and summary["loaded"] >= 12
    card = runner.invoke(cli, [*ws, "show", "tw:canoe-polo"])
    assert "canoe polo" in card.output and "Kanupolo" in card.output


def test_the_spec_and_curation_examples_are_valid(tw_workspace, monkeypatch):
    from kgkit.vocab.curation import load_curation
    from kgkit.vocab.spec import load_spec
    from kgkit.workspace import load_workspace

    ws = load_workspace(tw_workspace)
    specs = _blocks("spec.md", "yaml")
    assert specs
    for i, text in enumerate(specs):
        path = tw_workspace / "vocab" / f"example{i}.yaml"
        path.write_text(text, encoding="utf-8")
        load_spec(ws, path)  # raises SpecError naming the line on a bad example
    (curation,) = _blocks("curation.md", "yaml")
    path = tw_workspace / "vocab" / "example.curation.yaml"
    path.write_text(curation, encoding="utf-8")
    edits = load_curation(path)
    assert len(edits) == len(re.findall(r"^  - \w+:", curation, flags=re.M))

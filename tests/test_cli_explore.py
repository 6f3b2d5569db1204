"""The exploration commands through click's CliRunner: exact output, exit codes, messages."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner
from explore_support import T, make_explore_workspace

from kgkit.cli import cli


@pytest.fixture(scope="module")
def ws(tmp_path_factory):
    return make_explore_workspace(tmp_path_factory.mktemp("c") / "ws")


@pytest.fixture
def kg(ws):
    runner = CliRunner()

    def run(*args, input=None):
        return runner.invoke(cli, ["--workspace", str(ws.root), *args], input=input)

    return run


Q = "SELECT ?s ?l WHERE { ?s skos:prefLabel ?l FILTER(?s IN (t:rowing, t:sailing)) } ORDER BY ?s"


def test_query_table(kg):
    r = kg("query", Q)
    assert r.exit_code == 0, r.output
    assert r.output == (
        "?s         ?l\n"
        "---------  ----------\n"
        "t:rowing   rowing@en\n"
        "t:sailing  sailing@en\n"
        "(2 rows)\n"
    )


def test_query_formats(kg):
    r = kg("query", Q, "--format", "csv")
    # the bytes: CliRunner's .output folds CRLF, and the W3C CSV format wants CRLF
    assert r.stdout_bytes == f"s,l\r\n{T}rowing,rowing\r\n{T}sailing,sailing\r\n".encode()
    r = kg("query", Q, "--format", "tsv")
    assert r.output == f'?s\t?l\n<{T}rowing>\t"rowing"@en\n<{T}sailing>\t"sailing"@en\n'
    r = kg("query", Q, "--format", "json")
    assert json.loads(r.output)["head"] == {"vars": ["s", "l"]}
    r = kg("query", "CONSTRUCT WHERE { t:rowing skos:broader ?p }", "--format", "nt")
    assert r.output == (
        f"<{T}rowing> <http://www.w3.org/2004/02/skos/core#broader> <{T}water-sports> .\n"
    )


def test_query_from_file_and_stdin(kg, tmp_path):
    f = tmp_path / "q.rq"
    f.write_text("ASK { t:rowing ?p ?o }\n", encoding="utf-8")
    assert kg("query", "-f", str(f)).output == "true\n"
    assert kg("query", input="ASK { t:nothing ?p ?o }").output == "false\n"
    assert kg("query", "-", input="ASK { t:rowing ?p ?o }").output == "true\n"


def test_query_graph_option(kg):
    q = "SELECT ?s WHERE { ?s skos:prefLabel 'sailing'@en }"
    assert kg("query", q, "--graph", "topics").output.endswith("(0 rows)\n")
    assert kg("query", q, "-g", "topics", "-g", "other").output.endswith("(1 row)\n")
    r = kg("query", q, "--graph", "missing")
    assert r.exit_code == 1
    assert r.output.startswith("Error: no graph named 'missing'")


def test_update_refused(kg):
    r = kg("query", "DELETE WHERE { ?s ?p ?o }")
    assert r.exit_code == 1
    assert r.output == (
        "Error: this is a SPARQL update, which changes the store; "
        "refused (give --allow-update to run it)\n"
    )
    assert kg("query", "ASK { t:rowing ?p ?o }").output == "true\n"


def test_service_refused(kg):
    r = kg("query", "SELECT * WHERE { SERVICE <http://127.0.0.1:9/sparql> { ?s ?p ?o } }")
    assert r.exit_code == 1
    assert "--allow-service" in r.output


def test_syntax_error_message(kg):
    r = kg("query", "SELECT ?s\nWHERE {\n  ?s <bad iri> ?o }")
    assert r.exit_code == 1
    lines = r.output.splitlines()
    assert lines[0].startswith("Error: query:3:")
    assert lines[1] == "    ?s <bad iri> ?o }"
    assert lines[2].strip() == "^"


def test_run_template(kg):
    r = kg(
        "run", "descendants", "-p", "root=t:water-sports", "-p", "max_depth=1", "--format", "tsv"
    )
    assert r.exit_code == 0, r.output
    assert r.output == (
        "?item\t?depth\n"
        f'<{T}paddle-sports>\t"1"^^<http://www.w3.org/2001/XMLSchema#integer>\n'
        f'<{T}rowing>\t"1"^^<http://www.w3.org/2001/XMLSchema#integer>\n'
        f'<{T}sailing>\t"1"^^<http://www.w3.org/2001/XMLSchema#integer>\n'
        f'<{T}water-polo>\t"1"^^<http://www.w3.org/2001/XMLSchema#integer>\n'
    )
    r = kg("run", "descendants", "-p", "root=x> } ; DROP ALL ; #")
    assert r.exit_code == 1
    assert r.output.startswith("Error: parameter 'root' (iri): 'x> } ; DROP ALL ; #' is neither")
    assert kg("query", "ASK { t:rowing ?p ?o }").output == "true\n"
    r = kg("run", "descendants", "-p", "root")
    assert r.exit_code == 2 and "write -p PARAM=VALUE" in r.output
    r = kg("run", "nothing-like-it")
    assert r.exit_code == 1 and "no template named 'nothing-like-it'" in r.output


def test_templates_listing(kg):
    r = kg("templates")
    assert r.exit_code == 0
    assert "descendants  (built-in)" in r.output
    assert "    -p root         iri        required        the entity at the top" in r.output
    r = kg("templates", "descendants")
    assert "SELECT ?parent ?item WHERE {" in r.output


def test_show(kg):
    r = kg("show", "t:canoe-polo")
    assert r.exit_code == 0, r.output
    assert r.output == (
        f"t:canoe-polo  <{T}canoe-polo>\n"
        "  label        Kanupolo  @de\n"
        "  label        canoe polo  @en\n"
        "  alias        kayak polo  @en\n"
        "  description  team sport played in canoes, with a ball  @en\n"
        "  type         t:TeamSport\n"
        "  parent       t:ball-games  ball games\n"
        "  parent       t:paddle-sports  paddle sports\n"
        "  children     0\n"
    )
    assert kg("show", "canoe polo").output == r.output
    assert kg("show", f"<{T}canoe-polo>").output == r.output
    data = json.loads(kg("show", "t:rowing", "--json").output)
    assert data["labels"] == {"en": ["rowing"]} and data["children"] == 1


def test_show_ambiguous_label_lists_candidates(kg):
    r = kg("show", "polo")
    assert r.exit_code == 1
    assert r.output == (
        "Error: 'polo' is the label of 2 entities; name one by CURIE or IRI:\n"
        "  t:polo  polo  under ball games\n"
        "  t:water-polo  polo  under water sports\n"
    )
    r = kg("show", "no such thing")
    assert r.exit_code == 1
    assert (
        r.output
        == "Error: no entity is labelled or coded 'no such thing'; try `kgkit find no such thing`\n"
    )


def test_find(kg):
    r = kg("find", "polo")
    assert r.output == (
        "t:polo  polo  under ball games\n"
        "t:water-polo  polo  under water sports\n"
        "t:canoe-polo  canoe polo  under ball games, paddle sports\n"
    )
    r = kg("find", "kayak")
    assert (
        r.output
        == "t:canoe-polo  canoe polo  (alias 'kayak polo')  under ball games, paddle sports\n"
    )
    r = kg("find", "polo", "--json", "--limit", "1")
    assert json.loads(r.output)["curie"] == "t:polo"
    assert kg("find", "zzz").exit_code == 0


def test_tree(kg):
    r = kg("tree", "t:sport", "--depth", "4")
    assert r.exit_code == 0, r.output
    assert r.output == (
        "sport  t:sport  (11 below)\n"
        "  ball games  t:ball-games  (2 below)\n"
        "    canoe polo  t:canoe-polo  (2 parents)\n"
        "    polo  t:polo\n"
        "  loop b  t:loop-b  (1 below; 2 parents)\n"
        "    loop a  t:loop-a  (1 below)\n"
        "      loop b  t:loop-b  (cycle: an ancestor of itself, not followed)\n"
        "  water sports  t:water-sports  (6 below)\n"
        "    paddle sports  t:paddle-sports  (1 below)\n"
        "      canoe polo  t:canoe-polo  (2 parents; shown above)\n"
        "    rowing  t:rowing  (1 below)\n"
        "      Lakeport regatta  t:lakeport-regatta\n"
        "    sailing  t:sailing\n"
        "    polo  t:water-polo\n"
    )
    r = kg("tree", "water sports", "--depth", "1", "--max-children", "2")
    assert r.output == (
        "water sports  t:water-sports  (6 below)\n"
        "  paddle sports  t:paddle-sports  (1 below)\n"
        "  rowing  t:rowing  (1 below)\n"
        "  … 2 more\n"
    )


def test_shell_session_and_history(kg, ws):
    history = ws.root / ".kgkit" / "shell-history"
    if history.exists():
        history.unlink()
    script = (
        "SELECT ?s\n"
        "WHERE { ?s skos:prefLabel 'rowing'@en ;\n"
        "          skos:broader ?p } ;\n"
        ":format csv\n"
        ":run children entity=t:rowing\n"
        "DROP ALL ;\n"
        ":nope\n"
        ":quit\n"
        "ASK { ?s ?p ?o } ;\n"
    )
    r = kg("shell", input=script)
    assert r.exit_code == 0, r.output
    assert r.stdout_bytes.decode() == (
        "kgkit>   ...>   ...> ?s\n"
        "--------\n"
        "t:rowing\n"
        "(1 row)\n"
        "kgkit> output format: csv\n"
        "kgkit> item,label,children\r\n"
        f"{T}lakeport-regatta,Lakeport regatta,0\r\n"
        "kgkit> Error: this is a SPARQL update, which changes the store; "
        "refused (give --allow-update to run it)\n"
        "kgkit> Error: unknown command :nope (:help lists them)\n"
        "kgkit> "
    )
    assert history.read_text(encoding="utf-8").splitlines() == [
        "SELECT ?s WHERE { ?s skos:prefLabel 'rowing'@en ; skos:broader ?p } ;",
        ":format csv",
        ":run children entity=t:rowing",
        "DROP ALL ;",
        ":nope",
        ":quit",
    ]
    # a second session adds to the same history
    kg("shell", input=":prefixes\n")
    assert history.read_text(encoding="utf-8").splitlines()[-1] == ":prefixes"


def test_shell_lists_prefixes_and_templates(kg):
    r = kg("shell", input=":prefixes\n:templates\n:help\n")
    assert "t:    http://example.org/t/\n" in r.output
    assert "descendants  root=iri max_depth?=integer links?=predicates\n" in r.output
    assert ":format NAME" in r.output
    r = kg("shell", input="SELECT * WHERE {\n")
    assert r.output.endswith("(unfinished statement dropped: end it with ;)\n")


def test_shell_on_a_pseudo_terminal_keeps_history(ws):
    """The interactive path (readline, a real terminal) of `kgkit shell`."""
    import os
    import pty
    import select
    import subprocess
    import sys
    import time
    from pathlib import Path

    exe = Path(sys.executable).with_name("kgkit")
    if not exe.exists():
        pytest.skip("no kgkit console script next to the interpreter")
    history = ws.root / ".kgkit" / "shell-history"
    history.write_text(":graphs\n", encoding="utf-8")
    master, slave = pty.openpty()
    proc = subprocess.Popen(
        [str(exe), "--workspace", str(ws.root), "shell"],
        stdin=slave,
        stdout=slave,
        stderr=slave,
        env={**os.environ, "COLUMNS": "100", "TERM": "dumb"},
    )
    os.close(slave)
    out = b""

    def read_until(marker: bytes, timeout: float = 30) -> None:
        nonlocal out
        end = time.monotonic() + timeout
        while marker not in out and time.monotonic() < end:
            r, _, _ = select.select([master], [], [], 0.2)
            if r:
                try:
                    out += os.read(master, 4096)
                except OSError:
                    return

    try:
        read_until(b"kgkit> ")
        os.write(master, b"ASK { t:rowing ?p ?o } ;\n")
        read_until(b"true")
        os.write(master, b":quit\n")
        proc.wait(timeout=30)
    finally:
        if proc.poll() is None:
            proc.kill()
        os.close(master)
    assert b"end queries with ;" in out
    assert b"true" in out
    assert history.read_text(encoding="utf-8").splitlines() == [
        ":graphs",
        "ASK { t:rowing ?p ?o } ;",
        ":quit",
    ]


def test_shell_survives_ctrl_c(ws):
    from kgkit.query import connect
    from kgkit.shell import Shell

    lines = iter(["SELECT * WHERE {", KeyboardInterrupt, "ASK { t:rowing ?p ?o } ;", None])
    shown = []

    def read(prompt):
        shown.append(prompt)
        item = next(lines)
        if item is KeyboardInterrupt:
            raise KeyboardInterrupt
        return item

    with connect(ws) as backend:
        Shell(backend, read, shown.append).loop()
    assert shown == ["kgkit> ", "  ...> ", "\n(cancelled)\n", "kgkit> ", "true\n", "kgkit> "]


def test_allowed_update_from_the_command_line(tmp_path):
    ws = make_explore_workspace(tmp_path / "ws")
    runner = CliRunner()

    def run(*args):
        return runner.invoke(cli, ["--workspace", str(ws.root), *args])

    graph = run("query", "SELECT ?g WHERE { GRAPH ?g { t:sailing ?p ?o } }", "--format", "tsv")
    content = graph.output.splitlines()[1]
    update = f"INSERT DATA {{ GRAPH {content} {{ t:surfing skos:broader t:water-sports }} }}"
    r = run("query", update, "--allow-update")
    assert (r.exit_code, r.output) == (0, "update applied\n")
    assert "t:surfing" in run("tree", "t:water-sports", "--depth", "1").output

"""kgkit init and finding the workspace."""

from __future__ import annotations

from kgkit.cli import cli
from kgkit.workspace import find_workspace, load_workspace


def test_init_makes_workspace_with_store(tmp_path, runner):
    result = runner.invoke(cli, ["init", str(tmp_path / "w")])
    assert result.exit_code == 0, result.output
    root = tmp_path / "w"
    assert (root / "kgkit.yaml").is_file()
    assert (root / "queries").is_dir() and (root / "vocab").is_dir()
    assert (root / ".kgkit" / "store").is_dir()
    ws = load_workspace(root)
    assert ws.store_path == (root / ".kgkit" / "store").resolve()
    assert ws.profile["parent"] == (
        "http://www.w3.org/2004/02/skos/core#broader",
        "http://www.w3.org/2000/01/rdf-schema#subClassOf",
    )


def test_init_refuses_to_overwrite(tmp_path, runner):
    runner.invoke(cli, ["init", str(tmp_path)])
    result = runner.invoke(cli, ["init", str(tmp_path)])
    assert result.exit_code == 1
    assert "already exists; not overwriting it" in result.output


def test_workspace_found_from_subfolder(workspace):
    sub = workspace.root / "vocab" / "deep"
    sub.mkdir()
    assert find_workspace(sub).root == workspace.root


def test_malformed_config_names_the_key(workspace, kgkit):
    cfg = workspace.root / "kgkit.yaml"
    cfg.write_text(cfg.read_text() + "\nstorage: elsewhere\n")
    result = kgkit("graphs")
    assert result.exit_code == 1
    assert "unknown key 'storage'" in result.output
    cfg.write_text("profile:\n  parent: [nope:broader]\n")
    result = kgkit("graphs")
    assert result.exit_code == 1
    assert "key 'profile.parent'" in result.output and "nope:broader" in result.output
    assert "Traceback" not in result.output


def test_no_workspace_is_one_line_error(tmp_path, runner, monkeypatch):
    monkeypatch.chdir(tmp_path)
    result = runner.invoke(cli, ["graphs"])
    assert result.exit_code == 1
    assert result.output.startswith("Error: no kgkit.yaml in")

"""A release builds only on a previous release that verifies; ``verify`` checks the
manifest's metadata too; leftovers of killed compiles and releases are cleared; a stray
folder named like a version is ignored with a warning.

Each test is named after the tampering or leftover it triggers (invented Tidewell data).
"""

from __future__ import annotations

import json
import os
import shutil

import pytest
from test_release import REDIRECT, TOPICS_1, dump, setup, topics_2

from kgkit.release.manifest import ManifestError, manifest_json, verify_release
from kgkit.release.release import ReleaseError, make_release
from kgkit.release.versioning import clear_leftovers, list_releases, scan_releases


def _no_such_pid() -> int:
    """A process id no process can have (above the kernel's largest), as a killed one."""
    with open("/proc/sys/kernel/pid_max") as fh:
        return int(fh.read()) + 1


def _first_release(ws):
    spec = setup(ws, dump(TOPICS_1))
    r1 = make_release(ws, spec)
    setup(ws, dump(topics_2(), REDIRECT), "dump-2.nt")  # a refresh with changes to release
    return spec, r1


def _edit_manifest(folder, change):
    m = json.loads((folder / "manifest.json").read_text(encoding="utf-8"))
    change(m)
    (folder / "manifest.json").write_text(manifest_json(m), encoding="utf-8")


def _home_entries(ws):
    return sorted(p.name for p in (ws.vocab_dir / "sport").iterdir())


def test_fake_topic_in_previous_topics_jsonl_refuses_release(workspace):
    spec, r1 = _first_release(workspace)
    path = r1.path / "topics.jsonl"
    fake = {"id": "aaa-fake", "labels": {"en": "fake"}, "status": "active", "parents": []}
    path.write_text(json.dumps(fake) + "\n" + path.read_text(encoding="utf-8"), encoding="utf-8")
    with pytest.raises(ReleaseError) as exc:
        make_release(workspace, spec)
    msg = str(exc.value)
    assert "\n" not in msg
    assert msg.startswith(f"{r1.path}/topics.jsonl: changed (sha256 ")
    assert msg.endswith(
        "; the previous release 1.0.0 does not verify, so nothing was released on top of it"
    )
    assert _home_entries(workspace) == ["1.0.0", "build"]


def test_release_file_replaced_by_symlink_to_copy_refuses_release(workspace, tmp_path):
    spec, r1 = _first_release(workspace)
    copy = tmp_path / "elsewhere-topics.jsonl"
    shutil.copyfile(r1.path / "topics.jsonl", copy)
    (r1.path / "topics.jsonl").unlink()
    (r1.path / "topics.jsonl").symlink_to(copy)
    res = verify_release(r1.path)
    assert res.problems[0] == {
        "file": "topics.jsonl",
        "problem": f"a symbolic link (to {copy}); a release holds only regular files",
    }
    with pytest.raises(ReleaseError, match=r"topics.jsonl: a symbolic link \(to "):
        make_release(workspace, spec)
    assert _home_entries(workspace) == ["1.0.0", "build"]


def test_manifest_version_edited_refuses_release(workspace):
    spec, r1 = _first_release(workspace)
    _edit_manifest(r1.path, lambda m: m.update(version="1.0.1"))
    assert verify_release(r1.path).problems == [
        {"file": "manifest.json", "problem": "'version' 1.0.1 does not match the folder name 1.0.0"}
    ]
    with pytest.raises(
        ReleaseError,
        match=r"1.0.0/manifest.json: 'version' 1.0.1 does not match the folder name 1.0.0; "
        "the previous release 1.0.0 does not verify",
    ):
        make_release(workspace, spec)
    assert _home_entries(workspace) == ["1.0.0", "build"]


def test_manifest_metadata_edits_are_problems(workspace):
    _spec, r1 = _first_release(workspace)

    def tamper(m):
        m["previous"] = "2.0.0"
        m["kgkit_version"] = "99.0.0"
        m["counts"]["topics"] = 8
        m["sources"][0]["files"][0]["sha256"] = "0" * 64
        m["released"] = "yesterday"

    _edit_manifest(r1.path, tamper)
    assert [p["problem"] for p in verify_release(r1.path).problems] == [
        "'previous' 2.0.0 is not earlier than 'version' 1.0.0",
        "'kgkit_version' 99.0.0 is newer than this kgkit (0.1.0); it cannot vouch for the release",
        "'released' is not a UTC time such as 2026-01-31T12:00:00Z",
        "source graph 'tidewell': 'sha256' does not match the hashes of its dump files",
        "'counts.topics' says 8, the files hold 7",
    ]


def test_manifest_name_of_another_vocabulary_refuses_release(workspace):
    spec, r1 = _first_release(workspace)
    _edit_manifest(r1.path, lambda m: m.update(name="boats"))
    with pytest.raises(ReleaseError, match="'name' \"boats\" is not vocabulary 'sport'"):
        make_release(workspace, spec)


def test_previous_pointing_past_the_release_before_refuses_release(workspace):
    spec, r1 = _first_release(workspace)
    r2 = make_release(workspace, spec)
    assert r2.version == "2.0.0"
    _edit_manifest(r2.path, lambda m: m.update(previous=None))
    assert verify_release(r2.path).ok  # alone, a release without a previous one is fine
    with pytest.raises(ReleaseError, match="'previous' is null but the release before it"):
        make_release(workspace, spec, version="2.0.1")


def test_manifest_files_entry_not_an_object_is_one_line_error(workspace):
    _spec, r1 = _first_release(workspace)
    _edit_manifest(r1.path, lambda m: m["files"].update({"topics.jsonl": "abc"}))
    with pytest.raises(ManifestError) as exc:
        verify_release(r1.path)
    assert str(exc.value) == (
        f"{r1.path}/manifest.json: malformed manifest (entry \"topics.jsonl\" of 'files' "
        "is not an object with 'sha256' text and 'bytes' number)"
    )
    _edit_manifest(r1.path, lambda m: m.update(files=[]))
    with pytest.raises(ManifestError, match=r"malformed manifest \(no 'files' object\)"):
        verify_release(r1.path)


def test_folder_and_unlisted_symlink_in_release_are_problems(workspace, tmp_path):
    _spec, r1 = _first_release(workspace)
    (r1.path / "extra").mkdir()
    (r1.path / "link").symlink_to(tmp_path)
    problems = {(p["file"], p["problem"]) for p in verify_release(r1.path).problems}
    assert problems == {
        ("extra", "a folder, not listed in the manifest"),
        ("link", f"a symbolic link (to {tmp_path}), not listed in the manifest"),
    }


def test_stray_version_folder_is_ignored_with_a_warning(workspace):
    spec, r1 = _first_release(workspace)
    stray = workspace.vocab_dir / "sport" / "7.0.0"
    stray.mkdir()
    (stray / "notes.txt").write_text("kept by hand\n")
    found = scan_releases(workspace.vocab_dir / "sport")
    assert [str(v) for v in found.releases] == ["1.0.0"] and found.strays == [stray]
    r2 = make_release(workspace, spec)
    assert r2.version == "2.0.0" and r2.previous == "1.0.0"
    assert r2.warnings == [
        f"{stray}: named like a version but holds no manifest.json; not a release, ignored"
    ]
    assert (stray / "notes.txt").read_text() == "kept by hand\n"


def test_stray_folder_in_the_way_of_the_next_version_is_refused_by_name(workspace):
    spec, _r1 = _first_release(workspace)
    (workspace.vocab_dir / "sport" / "2.0.0").mkdir()
    with pytest.raises(
        ReleaseError, match="holding no manifest.json is in the way of release 2.0.0"
    ):
        make_release(workspace, spec)
    r = make_release(workspace, spec, version="2.0.1")
    assert r.previous == "1.0.0"


def test_temp_folders_of_killed_releases_and_compiles_are_removed(workspace):
    spec, _r1 = _first_release(workspace)
    home = workspace.vocab_dir / "sport"
    dead = _no_such_pid()
    left = [
        home / f".build.tmp-{dead}",
        home / f".build.old-{dead}",
        home / f".2.0.0.tmp-{dead}-x1y2z3",
        home / ".2.0.0.tmp-k3j_9xa1",  # the older name, without a process id
    ]
    running = home / f".build.tmp-{os.getppid()}"  # a live process: left alone
    for p in [*left, running]:
        p.mkdir()
        (p / "topics.jsonl").write_text("{}\n")
    r2 = make_release(workspace, spec)
    assert r2.version == "2.0.0"
    assert [p for p in left if p.exists()] == []
    assert running.exists()
    shutil.rmtree(running)
    assert _home_entries(workspace) == ["1.0.0", "2.0.0", "build"]


def test_clear_leftovers_leaves_symlinks_and_other_names(tmp_path):
    target = tmp_path / "target"
    target.mkdir()
    home = tmp_path / "home"
    home.mkdir()
    (home / ".build.tmp-999999999").symlink_to(target)
    (home / ".notes.tmp-1").mkdir()
    (home / "1.0.0").mkdir()
    assert clear_leftovers(home) == []
    assert sorted(p.name for p in home.iterdir()) == [
        ".build.tmp-999999999",
        ".notes.tmp-1",
        "1.0.0",
    ]
    assert target.exists()
    assert list_releases(home) == []  # 1.0.0 holds no manifest: a stray, not a release


def test_verify_kgkit_yaml_is_a_one_line_error(kgkit, workspace):
    r = kgkit("verify", str(workspace.root / "kgkit.yaml"))
    assert r.exit_code == 1
    assert r.output == (
        f"Error: {workspace.root / 'kgkit.yaml'}: not a folder; "
        "a release is a folder holding manifest.json\n"
    )
    r = kgkit("verify", str(workspace.root / "nowhere"))
    assert r.exit_code == 1 and r.output.startswith(
        f"Error: {workspace.root / 'nowhere'}: no such folder"
    )


def test_temp_folder_of_a_killed_compile_is_removed_by_the_next_compile(workspace):
    from kgkit.vocab.compile import compile_vocabulary

    spec = setup(workspace, dump(TOPICS_1))
    home = workspace.vocab_dir / "sport"
    home.mkdir()
    left = home / f".build.tmp-{_no_such_pid()}"
    left.mkdir()
    (left / "skos.ttl").write_text("half written")
    compile_vocabulary(workspace, spec)
    assert sorted(p.name for p in home.iterdir()) == ["build"]

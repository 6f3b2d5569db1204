"""Spec and curation-file validation: one line naming the file, the line and the key."""

from __future__ import annotations

import pytest

from kgkit.errors import SpecError
from kgkit.vocab.curation import load_curation
from kgkit.vocab.spec import load_spec

GOOD = """\
name: sport
namespace: http://example.org/vocab/sport/
select:
  - template: descendants
    params: {root: "<http://example.org/graph/sport>", max_depth: 3}
"""


def _spec(workspace, text):
    path = workspace.vocab_dir / "sport.yaml"
    path.write_text(text, encoding="utf-8")
    return load_spec(workspace, path)


def test_a_good_spec_gets_its_defaults(workspace):
    s = _spec(workspace, GOOD)
    assert s.scheme == "http://example.org/vocab/sport"
    assert s.title == "sport" and s.aliases.ambiguous == "keep"
    assert s.languages.kept is None and s.prune.max_depth is None
    assert s.build_dir == workspace.vocab_dir / "sport" / "build"
    assert s.curation == workspace.vocab_dir / "sport.curation.yaml"
    assert s.select[0].params == {"root": "<http://example.org/graph/sport>", "max_depth": "3"}


@pytest.mark.parametrize(
    "extra, message",
    [
        ("colour: red\n", "sport.yaml:6: key 'colour': unknown key"),
        ("prune: {depth: 3}\n", "sport.yaml:6: key 'prune.depth': unknown key"),
        ("prune: {max_depth: -1}\n", "key 'prune.max_depth': must be an integer >= 0, got -1"),
        ("prune: {stop_topics: [nope:x]}\n", "key 'prune.stop_topics[0]': 'nope:x' is neither"),
        ("exclude: [ex:thing]\n", "key 'exclude[0]': 'ex:thing' is neither"),
        ("languages: {required: [english!]}\n", "key 'languages.required[0]'"),
        ("languages: {missing: maybe}\n", "key 'languages.missing': must be one of keep | drop"),
        ("aliases: {min_length: two}\n", "key 'aliases.min_length'"),
        ("aliases: {drop_numeric: 1}\n", "key 'aliases.drop_numeric': must be true or false"),
        ("outputs: [pdf]\n", "key 'outputs[0]': must be one of jsonl | yaml | skos | lexicon"),
        (
            "prune:\n  min_popularity: {template: nope, min: 1}\n",
            "sport.yaml:7: key 'prune.min_popularity.template': unknown template 'nope'",
        ),
    ],
)
def test_bad_keys_are_one_line_errors(workspace, extra, message):
    with pytest.raises(SpecError) as exc:
        _spec(workspace, GOOD + extra)
    text = str(exc.value)
    assert message in text and "\n" not in text and str(workspace.vocab_dir) in text


def test_template_parameters_are_checked(workspace):
    with pytest.raises(SpecError, match=r"sport.yaml:5: key 'select\[0\].params.depth'"):
        _spec(workspace, GOOD.replace("max_depth: 3", "depth: 3"))
    with pytest.raises(SpecError, match=r"key 'select\[0\].params': .* needs the parameter 'root'"):
        _spec(workspace, GOOD.replace('root: "<http://example.org/graph/sport>", ', ""))
    with pytest.raises(SpecError, match=r"key 'select\[0\].params.max_depth'"):
        _spec(workspace, GOOD.replace("max_depth: 3", "max_depth: deep"))


def test_required_keys_and_bad_yaml(workspace):
    with pytest.raises(SpecError, match="key 'namespace' is required"):
        _spec(workspace, "name: x\nselect: []\n")
    with pytest.raises(SpecError, match=r"sport.yaml:2: "):
        _spec(workspace, "name: x\n  namespace: [\n")
    with pytest.raises(SpecError, match="must end with"):
        _spec(workspace, GOOD.replace("sport/\n", "sport\n", 1))


@pytest.mark.parametrize(
    "text, message",
    [
        ("edits:\n  - paint: {topic: a}\n", ":2: key 'edits[0]': unknown action 'paint'"),
        ("edits:\n  - add_alias: {topic: a}\n", "key 'edits[0].add_alias': needs 'alias'"),
        (
            "edits:\n  - add_alias: {topic: a, alias: b, lang: en}\n",
            "key 'edits[0].add_alias.lang': unknown field",
        ),
        (
            "edits:\n  - exclude: {topic: a, subtree: maybe}\n",
            "key 'edits[0].exclude.subtree': must be true or false",
        ),
        (
            "edits:\n  - add_topic: {id: 'a b', labels: {en: x}}\n",
            "key 'edits[0].add_topic.id'",
        ),
        ("changes: []\n", "key 'changes': unknown key"),
        (
            "edits:\n  - add_alias: {topic: a, alias: b}\n    merge: {topic: a, into: b}\n",
            "needs exactly one action",
        ),
    ],
)
def test_bad_curation_files_are_one_line_errors(tmp_path, text, message):
    path = tmp_path / "v.curation.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(SpecError) as exc:
        load_curation(path)
    assert message in str(exc.value) and str(path) in str(exc.value)


def test_a_missing_curation_file_means_no_edits(tmp_path):
    assert load_curation(tmp_path / "none.curation.yaml") == []

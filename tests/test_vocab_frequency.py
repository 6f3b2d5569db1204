"""Common-word risk (kgkit.vocab.frequency): Zipf frequencies from wordfreq."""

from __future__ import annotations

import wordfreq

from kgkit.vocab.frequency import common_words, is_rated, zipf


def test_frequency_differs_from_wordfreq():
    # wordfreq 3.x (Speer 2022, doi:10.5281/zenodo.7199437): the value is its own
    # zipf_frequency for the name in the primary language of its tag
    for name, tag in (("round", "en"), ("round", "en-GB"), ("hot dog", "en"), ("Brot", "de")):
        assert zipf(name, tag) == wordfreq.zipf_frequency(name, tag.split("-")[0])


def test_everyday_word_not_above_rare_name():
    # wordfreq's README: Zipf 3 is once per million words; an everyday word is far above
    # a made-up name, which wordfreq does not know at all (0)
    assert zipf("round", "en") > 4.5
    assert zipf("xqzvorbl", "en") == 0


def test_untagged_or_unknown_language_rated():
    assert zipf("round", "") is None
    assert zipf("round", "xx") is None
    assert not is_rated("")
    assert is_rated("en-US")


def test_common_words_missing_or_misgrouped():
    rows = [
        ("round", "beef-round", "en", "alias"),
        ("round", "boxing-round", "en", "preferred"),
        ("round", "runde", "", "alias"),  # untagged: no frequency, never listed
        ("top round", "beef-round", "en", "alias"),
        ("canoe polo", "canoe-polo", "en", "preferred"),
    ]
    threshold = wordfreq.zipf_frequency("top round", "en")  # at the threshold: listed
    out = common_words(rows, threshold)
    assert [(e["alias"], e["topics"], e["kinds"]) for e in out] == [
        ("round", ["beef-round", "boxing-round"], ["alias", "preferred"]),
        ("top round", ["beef-round"], ["alias"]),
    ]
    assert out[0]["zipf"] == wordfreq.zipf_frequency("round", "en")
    assert all(e["language"] == "en" for e in out)

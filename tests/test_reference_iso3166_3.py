"""The refresh cycle against published data: ISO 3166-3 withdrawn country names.

Source: ISO 3166-1 and ISO 3166-3 as shipped in the ``pycountry`` package (its
``databases/iso3166-1.json`` and ``iso3166-3.json``, taken from Debian's iso-codes),
version 26.2.16 when this was written (31 withdrawn countries, 21 of them with a
successor); ``PYCOUNTRY`` holds the version the test runs on and assertion messages name
it. In ISO 3166-3 the four-letter ``alpha_4`` code of a withdrawn country is its former
alpha-2 code followed by two letters that, when the country has one successor, are that
successor's alpha-2 code (e.g. BUMM: Burma -> MM); otherwise they are letters that are no
current alpha-2 code (HH for a country divided, XX, AA...). Which entries have a successor
is read from the data below (last two letters a current ISO 3166-1 alpha-2 code), never
written down by hand.

The test builds an N-Triples dump of the current countries plus the withdrawn ones, imports
it, releases a vocabulary, imports a refreshed dump in which each withdrawn country is gone
but redirected (``owl:sameAs``) to its successor where it has one, releases again, and reads
the two release folders: every withdrawn country's names match its successor, and the
names of those without a successor are listed in changelog.md as no longer matched.
"""

from __future__ import annotations

import importlib.metadata
import json

import pycountry  # in the test extra: a missing package fails, never skips
from refresh_support import keys_by_topic, lexicon, names_not_followed, topics

from kgkit.ingest import ImportOptions, import_files
from kgkit.release.release import make_release

#: ISO 3166-3 via pycountry: the version whose data this check reads
PYCOUNTRY = importlib.metadata.version("pycountry")

C = "http://example.org/iso3166/"  # our own namespace for the codes
PREF = "http://www.w3.org/2004/02/skos/core#prefLabel"
ALT = "http://www.w3.org/2004/02/skos/core#altLabel"
BROADER = "http://www.w3.org/2004/02/skos/core#broader"
SAME = "http://www.w3.org/2002/07/owl#sameAs"

SPEC = f"""name: countries
title: Countries, current and withdrawn (ISO 3166-1 and -3 via pycountry)
namespace: http://example.org/vocab/countries/
graphs: [iso]
select:
  - template: descendants
    params: {{root: "<{C}world>"}}
languages:
  required: [en]
"""


def _literal(text: str) -> str:
    return json.dumps(text, ensure_ascii=False) + "@en"


def _country(code: str, names: list[str]) -> list[str]:
    s = f"<{C}{code}>"
    lines = [f"{s} <{PREF}> {_literal(names[0])} ."]
    lines += [f"{s} <{ALT}> {_literal(n)} ." for n in dict.fromkeys(names[1:]) if n != names[0]]
    lines.append(f"{s} <{BROADER}> <{C}world> .")
    return lines


def current_names(c) -> list[str]:
    """A current country's names in ISO 3166-1 via pycountry: name, then official and
    common names where the data has them."""
    return [c.name] + [n for n in (getattr(c, "official_name", None),
                                   getattr(c, "common_name", None)) if n]  # fmt: skip


def dump(with_withdrawn: bool, successor: dict[str, str | None]) -> str:
    lines = [f'<{C}world> <{PREF}> "world"@en .']
    for c in pycountry.countries:
        lines += _country(c.alpha_2, current_names(c))
    for h in pycountry.historic_countries:
        if with_withdrawn:
            lines += _country(h.alpha_4, [h.name])
        elif successor[h.alpha_4]:
            lines.append(f"<{C}{h.alpha_4}> <{SAME}> <{C}{successor[h.alpha_4]}> .")
    return "\n".join(lines) + "\n"


def test_withdrawn_countries_names_follow_their_iso_3166_3_successor(workspace):
    # ISO 3166-3 via pycountry (26.2.16 when written; PYCOUNTRY at run time): the successor
    # is the alpha-2 code in the last two letters of alpha_4, when those letters are a
    # current ISO 3166-1 code
    current = {c.alpha_2 for c in pycountry.countries}
    successor = {
        h.alpha_4: h.alpha_4[2:] if h.alpha_4[2:] in current else None
        for h in pycountry.historic_countries
    }
    assert successor["BUMM"] == "MM", PYCOUNTRY  # ISO 3166-3 via pycountry: Burma -> MM
    with_successor = sorted(k for k, v in successor.items() if v)
    without = sorted(k for k, v in successor.items() if not v)
    assert with_successor and without, f"pycountry {PYCOUNTRY}: expected both kinds"

    spec = workspace.vocab_dir / "countries.yaml"
    spec.write_text(SPEC, encoding="utf-8")
    first = workspace.root / "iso-1.nt"
    first.write_text(dump(True, successor), encoding="utf-8")
    import_files(workspace, [str(first)], ImportOptions(graph="iso"))
    r1 = make_release(workspace, spec)
    refreshed = workspace.root / "iso-2.nt"
    refreshed.write_text(dump(False, successor), encoding="utf-8")
    import_files(workspace, [str(refreshed)], ImportOptions(graph="iso"))
    r2 = make_release(workspace, spec)
    assert (r1.version, r2.version) == ("1.0.0", "2.0.0")

    old_rows, new_rows = lexicon(r1.path), lexicon(r2.path)
    new_topics = topics(r2.path)
    keys_now = keys_by_topic(new_rows)
    md = (r2.path / "changelog.md").read_text(encoding="utf-8")
    lost = md.split("## Names no longer matched\n\n", 1)[1].split("\n## ", 1)[0].splitlines()

    for h in pycountry.historic_countries:
        code = h.alpha_4
        t = new_topics[code]
        assert t["status"] == "deprecated", code
        assert t["replaced_by"] == successor[code], (code, h.name)
        rows = [r for r in old_rows if r["topic"] == code]
        assert rows, f"{code} {h.name!r} had no lexicon row in release 1.0.0"
        for row in rows:
            if successor[code]:
                # ISO 3166-3 via pycountry: the withdrawn name now tags its successor
                assert row["match_key"] in keys_now[successor[code]], (PYCOUNTRY, code, row)
                # ... as an alias of the successor, written as the withdrawn name was
                assert any(
                    r["topic"] == successor[code]
                    and r["match_key"] == row["match_key"]
                    and r["alias"] == row["alias"]
                    and r["kind"] == "alias"
                    for r in new_rows
                ), (PYCOUNTRY, code, row)
            else:
                line = (
                    f"- {json.dumps(row['alias'], ensure_ascii=False)} [en], was a name of "
                    f"{h.name} ({code}): deprecated-without-replacement"
                )
                assert line in lost, (code, line)
        # the changelog names the change by label and id on its line
        to = (
            f"{new_topics[successor[code]]['labels']['en']} ({successor[code]})"
            if successor[code]
            else "(nothing)"
        )
        assert f"- deprecated {h.name} ({code}), replaced by {to}  (graph)" in md, code

    # issue 10's invariant on every row (current countries too), read from the files
    assert names_not_followed(r1.path, r2.path) == []
    # no current country lost a name on the way
    for row in old_rows:
        if row["topic"] in current:
            assert row["match_key"] in keys_now[row["topic"]], row

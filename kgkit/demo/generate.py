"""The deterministic generator of the demo data (seeded; the same bytes on every run).

It writes, around the hand-written core (``core.nt``):

- ``tidewell-topics.nt``: a few hundred generated topics in crafts, cooking,
  gardening and water sports, and the invented towns of the Tidewell region
  (N-Triples, with a few malformed lines on purpose);
- ``tidewell-archive.jsonl``: invented people and archive clips as entity
  records (JSON Lines, with a few malformed records on purpose);
- the *refreshed* core of the second dump (a topic removed with a redirect,
  two added, one relabelled, one moved);
- a small corpus of invented articles (``.txt``) for ``kgkit probe --corpus``.

Every name is invented from syllables; none names a real person, brand or product.
"""

from __future__ import annotations

import json
import random
from importlib import resources
from pathlib import Path

__all__ = [
    "SEED",
    "E",
    "REFRESH",
    "core_lines",
    "write_dumps",
    "write_corpus",
]

SEED = 1187
E = "http://demo.kgkit.invalid/e/"
P = "http://demo.kgkit.invalid/p/"
C = "http://demo.kgkit.invalid/c/"
_SKOS = "http://www.w3.org/2004/02/skos/core#"
_RDF_TYPE = "<http://www.w3.org/1999/02/22-rdf-syntax-ns#type>"
_OWL_SAME = "<http://www.w3.org/2002/07/owl#sameAs>"
_PREF, _ALT, _BROADER = f"<{_SKOS}prefLabel>", f"<{_SKOS}altLabel>", f"<{_SKOS}broader>"


def _iri(local: str) -> str:
    return f"<{E}{local}>"


def _lit(text: str, lang: str | None = None) -> str:
    body = text.replace("\\", "\\\\").replace('"', '\\"')
    return f'"{body}"@{lang}' if lang else f'"{body}"'


def _slug(text: str) -> str:
    return "-".join("".join(c if c.isalnum() else " " for c in text.lower()).split())


# What changes between the first dump and the refreshed one (the core only; the
# generated part is the same): each entry is (why, lines removed, lines added).
REFRESH: list[tuple[str, list[str], list[str]]] = [
    (
        "removed seaweed-foraging, redirected to shore-foraging",
        ["SUBJECT seaweed-foraging"],
        [f"{_iri('shore-foraging')} {_OWL_SAME} {_iri('seaweed-foraging')} ."],
    ),
    (
        "added sea-glass crafts",
        [],
        [
            f"{_iri('sea-glass-crafts')} {_RDF_TYPE} <{C}Topic> .",
            f"{_iri('sea-glass-crafts')} {_PREF} {_lit('sea-glass crafts', 'en')} .",
            f"{_iri('sea-glass-crafts')} {_PREF} {_lit('Seeglasbasteln', 'de')} .",
            f"{_iri('sea-glass-crafts')} {_ALT} {_lit('sea glass jewellery', 'en')} .",
            f"{_iri('sea-glass-crafts')} {_BROADER} {_iri('crafts')} .",
        ],
    ),
    (
        "added paddleboard polo",
        [],
        [
            f"{_iri('paddleboard-polo')} {_RDF_TYPE} <{C}Topic> .",
            f"{_iri('paddleboard-polo')} {_PREF} {_lit('paddleboard polo', 'en')} .",
            f"{_iri('paddleboard-polo')} {_PREF} {_lit('Paddleboard-Polo', 'de')} .",
            f"{_iri('paddleboard-polo')} {_BROADER} {_iri('paddle-sports')} .",
        ],
    ),
    (
        "relabelled reed-boat racing to reed boat racing",
        [f"{_iri('reed-boat-racing')} {_PREF} {_lit('reed-boat racing', 'en')} ."],
        [f"{_iri('reed-boat-racing')} {_PREF} {_lit('reed boat racing', 'en')} ."],
    ),
    (
        "moved fish smoking from cooking to preserving",
        [f"{_iri('fish-smoking')} {_BROADER} {_iri('cooking')} ."],
        [f"{_iri('fish-smoking')} {_BROADER} {_iri('preserving')} ."],
    ),
]


def core_lines(refreshed: bool = False) -> list[str]:
    """The hand-written core, as first dumped or (``refreshed``) as in the second dump."""
    text = resources.files("kgkit.demo").joinpath("core.nt").read_text(encoding="utf-8")
    lines = text.splitlines()
    if not refreshed:
        return lines
    for _why, removed, added in REFRESH:
        for gone in removed:
            if gone.startswith("SUBJECT "):
                subject = _iri(gone.split(" ", 1)[1]) + " "
                lines = [x for x in lines if not x.startswith(subject)]
            else:
                if gone not in lines:
                    raise AssertionError(f"refresh: {gone!r} not in core.nt")
                lines.remove(gone)
        lines.extend(added)
    return lines


# --- generated topics -------------------------------------------------------

_CRAFT_TECHNIQUES = {
    "carving": "Schnitzen",
    "weaving": "Weben",
    "plaiting": "Flechten",
    "dyeing": "Färben",
    "spinning": "Spinnen",
    "turning": "Drechseln",
    "felting": "Filzen",
    "stitching": "Sticken",
    "firing": "Brennen",
    "etching": "Ätzen",
}
_CRAFT_MATERIALS = {
    "willow": "Weide",
    "driftwood": "Treibholz",
    "oak": "Eiche",
    "wool": "Wolle",
    "linen": "Leinen",
    "clay": "Ton",
    "reed": "Schilf",
    "sailcloth": "Segeltuch",
    "copper": "Kupfer",
    "birch bark": "Birkenrinde",
    "flax": "Flachs",
    "hemp": "Hanf",
    "slate": "Schiefer",
    "seagrass": "Seegras",
    "horn": "Horn",
}
_DISHES = {
    "soups": ("soup", "Suppe"),
    "pies": ("pie", "Pastete"),
    "stews": ("stew", "Eintopf"),
    "chowders": ("chowder", "Fischsuppe"),
    "fritters": ("fritters", "Krapfen"),
    "salads": ("salad", "Salat"),
    "breads": ("bread", "Brot"),
    "pickles": ("pickle", "Eingelegtes"),
}
_INGREDIENTS = {
    "mackerel": "Makrele",
    "eel": "Aal",
    "mussel": "Miesmuschel",
    "samphire": "Queller",
    "nettle": "Brennnessel",
    "barley": "Gerste",
    "rye": "Roggen",
    "oyster": "Auster",
    "crab": "Krabbe",
    "rhubarb": "Rhabarber",
    "gooseberry": "Stachelbeere",
    "elderflower": "Holunderblüte",
    "kelp": "Seetang",
    "sorrel": "Sauerampfer",
    "leek": "Lauch",
}
_GARDEN_PRACTICES = {
    "growing": "Anbau",
    "pruning": "Schnitt",
    "seed saving": "Saatgutgewinnung",
    "propagation": "Vermehrung",
}
_PLANTS = {
    "leek": "Lauch",
    "kale": "Grünkohl",
    "rhubarb": "Rhabarber",
    "sea kale": "Meerkohl",
    "lavender": "Lavendel",
    "thyme": "Thymian",
    "broad bean": "Saubohne",
    "potato": "Kartoffel",
    "onion": "Zwiebel",
    "marigold": "Ringelblume",
    "sorrel": "Sauerampfer",
    "samphire": "Queller",
}
_BOATS = {
    "dinghy": "Jolle",
    "skiff": "Skiff",
    "coracle": "Coracle",
    "punt": "Stechkahn",
    "gig": "Gig",
    "kayak": "Kajak",
    "canoe": "Kanu",
    "sloop": "Slup",
}
_BOAT_ACTIVITIES = {"racing": "Regatta", "touring": "Wandern", "restoration": "Restaurierung"}

# Invented place-name syllables (chosen so that the combinations are not real places).
_TOWN_HEADS = [
    "Brack",
    "Quill",
    "Tidd",
    "Vell",
    "Orrin",
    "Skerl",
    "Hollin",
    "Marrow",
    "Wend",
    "Fallow",
    "Cresk",
    "Ebber",
    "Penhal",
    "Storr",
    "Yarl",
    "Gullan",
    "Sedge",
    "Wrack",
]
_TOWN_TAILS = [
    "mere",
    "wick",
    "stow",
    "holm",
    "combe",
    "ness",
    "thorpe",
    "mouth",
    "by",
    "ley",
]
_DISTRICTS = ["Northshore", "Saltflats", "Reedlands", "Tidewater Vale", "Cliffside"]
_FIRST = [
    "Odile",
    "Bram",
    "Tamsin",
    "Ivo",
    "Wenna",
    "Corin",
    "Elowen",
    "Jory",
    "Mabyn",
    "Tobiah",
    "Senna",
    "Kit",
    "Ruan",
    "Ysolde",
    "Piran",
    "Lowenna",
    "Arzel",
    "Merryn",
    "Tegen",
    "Casvel",
]
_SURNAME_HEADS = ["Pen", "Quill", "Tre", "Vell", "Marr", "Orr", "Skel", "Bram", "Fen", "Wyn"]
_SURNAME_TAILS = ["warrow", "fenby", "cask", "holt", "mire", "dowrick", "lusk", "tarran", "widge"]


def _topic_lines(local: str, en: str | None, de: str | None, parents: list[str]) -> list[str]:
    s = _iri(local)
    out = [f"{s} {_RDF_TYPE} <{C}Topic> ."]
    if en:
        out.append(f"{s} {_PREF} {_lit(en, 'en')} .")
    if de:
        out.append(f"{s} {_PREF} {_lit(de, 'de')} .")
    out += [f"{s} {_BROADER} {_iri(p)} ." for p in parents]
    return out


def _generated(rng: random.Random) -> tuple[list[str], list[str], dict[str, str]]:
    """N-Triples lines, the town ids, and topic id -> English label (for the archive)."""
    lines: list[str] = ["# Generated part of the Tidewell demo graph (seeded; invented)."]
    labels: dict[str, str] = {}

    def add(local, en, de, parents, alts=()):
        if rng.random() < 0.08:  # some topics lack the German label, as in real dumps
            de = None
        lines.extend(_topic_lines(local, en, de, parents))
        lines.extend(f"{_iri(local)} {_ALT} {_lit(a, 'en')} ." for a in alts)
        labels[local] = en

    for tech, tech_de in _CRAFT_TECHNIQUES.items():
        add(tech, tech, tech_de, ["crafts"])
        for mat, mat_de in _CRAFT_MATERIALS.items():
            if rng.random() < 0.45:
                alts = [f"{tech} {mat}"] if rng.random() < 0.3 else []
                add(_slug(f"{mat} {tech}"), f"{mat} {tech}", f"{tech_de} ({mat_de})", [tech], alts)
    add("recipes", "recipes", "Rezepte", ["cooking"], ["dishes"])
    for dish, (single, dish_de) in _DISHES.items():
        add(dish, dish, dish_de, ["recipes"])
        for ing, ing_de in _INGREDIENTS.items():
            if rng.random() < 0.4:
                add(_slug(f"{ing} {single}"), f"{ing} {single}", f"{dish_de} ({ing_de})", [dish])
    for practice, practice_de in _GARDEN_PRACTICES.items():
        local = _slug(f"plant {practice}")
        add(local, f"plant {practice}", practice_de, ["gardening"])
        for plant, plant_de in _PLANTS.items():
            if rng.random() < 0.5:
                add(
                    _slug(f"{plant} {practice}"),
                    f"{plant} {practice}",
                    f"{practice_de} ({plant_de})",
                    [local],
                )
    add("boating", "boating", "Bootfahren", ["water-sports"], ["boats"])
    for act, act_de in _BOAT_ACTIVITIES.items():
        add(_slug(f"boat {act}"), f"boat {act}", f"Boots-{act_de}", ["boating"])
        for boat, boat_de in _BOATS.items():
            if rng.random() < 0.6:
                add(
                    _slug(f"{boat} {act}"),
                    f"{boat} {act}",
                    f"{boat_de}-{act_de}",
                    [_slug(f"boat {act}")],
                )

    # districts and towns of the invented Tidewell region
    for d in _DISTRICTS:
        local = _slug(d)
        lines += _topic_lines(local, d, None, ["tidewell-region"])
        lines.append(f"{_iri(local)} {_RDF_TYPE} <{C}District> .")
    towns: list[str] = []
    names = [h + t for h in _TOWN_HEADS for t in _TOWN_TAILS]
    rng.shuffle(names)
    for name in sorted(names[:120]):
        local = _slug(name)
        district = _slug(rng.choice(_DISTRICTS))
        s = _iri(local)
        lines.append(f"{s} {_RDF_TYPE} <{C}Town> .")
        lines.append(f"{s} <http://www.w3.org/2000/01/rdf-schema#label> {_lit(name)} .")
        lines.append(f"{s} {_BROADER} {_iri(district)} .")
        lines.append(
            f"{s} <{P}population> "
            f'"{rng.randint(300, 40000)}"^^<http://www.w3.org/2001/XMLSchema#integer> .'
        )
        towns.append(local)
        labels[local] = name
    # regattas held in some towns
    add("regattas", "regattas", "Regatten", ["water-sports"])
    for local in towns:
        if rng.random() < 0.3:
            name = labels[local]
            add(f"{local}-regatta", f"{name} regatta", f"Regatta {name}", ["regattas"])
            lines.append(f"{_iri(local + '-regatta')} <{P}heldIn> {_iri(local)} .")
    # a few malformed lines, as any large dump has
    lines.insert(len(lines) // 3, f"{_iri('oak carving')} {_PREF} {_lit('oak carving', 'en')} .")
    lines.insert(len(lines) // 2, f"{_iri('kelp-soup')} {_PREF} {_lit('kelp soup', 'en')}")
    lines.insert(2 * len(lines) // 3, f"{_iri('Storrmouth')} {_BROADER} <not an iri> .")
    return lines, towns, labels


def _archive(rng: random.Random, towns: list[str], labels: dict[str, str]) -> list[str]:
    """Entity records of invented people and archive clips."""
    topics = sorted(k for k in labels if k not in set(towns))
    out = []
    people = []
    for n in range(1, 1401):
        first = rng.choice(_FIRST)
        last = rng.choice(_SURNAME_HEADS) + rng.choice(_SURNAME_TAILS)
        pid = f"person-{n:04d}"
        people.append((pid, f"{first} {last}"))
        record = {
            "id": f"<{E}{pid}>",
            "names": {"": f"{first} {last}"},
            "kinds": [f"<{C}Person>"],
            "facts": [
                {"p": f"<{P}livesIn>", "o": f"<{E}{rng.choice(towns)}>"},
                {"p": f"<{P}practises>", "o": f"<{E}{rng.choice(topics)}>"},
            ],
        }
        out.append(json.dumps(record, ensure_ascii=False, sort_keys=True))
    for n in range(1, 901):
        topic = rng.choice(topics)
        pid, person = rng.choice(people)
        town = rng.choice(towns)
        record = {
            "id": f"<{E}clip-{n:04d}>",
            "names": {"en": f"Clip {n:04d}: {labels[topic]} with {person} in {labels[town]}"},
            "kinds": [f"<{C}Clip>"],
            "facts": [
                {"p": f"<{P}about>", "o": f"<{E}{topic}>"},
                {"p": f"<{P}features>", "o": f"<{E}{pid}>"},
                {"p": f"<{P}filmedIn>", "o": f"<{E}{town}>"},
                {"p": f"<{P}minutes>", "value": str(rng.randint(2, 45)), "type": "xsd:integer"},
            ],
        }
        out.append(json.dumps(record, ensure_ascii=False, sort_keys=True))
    # malformed records: broken JSON, and a record without its id
    out.insert(700, '{"id": "<' + E + 'person-9001>", "names": {"": "Arzel Penlusk"}')
    out.insert(1500, json.dumps({"names": {"en": "Clip without an id"}}))
    return out


def _write(path: Path, lines: list[str]) -> Path:
    from kgkit.files import write_text_atomic

    return write_text_atomic(path, "\n".join(lines) + "\n")


def write_dumps(folder: Path, refreshed: bool = False) -> dict[str, Path]:
    """Write the demo dump into ``folder``; returns role -> path.

    Roles: ``core`` and ``topics`` (N-Triples), ``archive`` (entity records).
    With ``refreshed`` the core is the second dump's; the other files are the same.
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    rng = random.Random(SEED)
    topic_lines, towns, labels = _generated(rng)
    archive = _archive(rng, towns, labels)
    suffix = "-refreshed" if refreshed else ""
    return {
        "core": _write(folder / f"tidewell-core{suffix}.nt", core_lines(refreshed)),
        "topics": _write(folder / "tidewell-topics.nt", topic_lines),
        "archive": _write(folder / "tidewell-archive.jsonl", archive),
    }


# --- the corpus -------------------------------------------------------------

_OPENINGS = [
    "From the Tidewell Media Cooperative archive.",
    "Tidewell Media Cooperative, weekend edition.",
    "A Tidewell Media Cooperative clip note.",
]
_SENTENCES = [
    "{person} of {town} spent the morning on {a}, then turned to {b}.",
    "In {town}, the news of the harbour was {a}; some said {b} was more fun.",
    "{person} says {a} is best learnt from a neighbour, and {b} from a book.",
    "The club in {town} runs evenings of {a} and weekend activities for children.",
    "Our reporter watched {a} at close range and left with notes on {b}.",
    "Rain stopped the {a} in {town}, so {person} showed us {b} instead.",
]


def write_corpus(folder: Path, documents: int = 36) -> list[Path]:
    """Write the invented articles of the demo corpus as ``.txt`` files into ``folder``."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    rng = random.Random(SEED + 1)
    _lines, towns, labels = _generated(random.Random(SEED))
    topic_words = [
        "canoe polo",
        "kayak polo",
        "reed racing",
        "sailing",
        "tacking",
        "netting",
        "net mending",
        "basket weaving",
        "wild swimming",
        "gig rowing",
        "fish smoking",
        "seaweed foraging",
        "kelp gathering",
        "bread baking",
        "composting",
        "crop netting",
        "coastal gardening",
        "rope work",
        "knot tying",
        "boatbuilding",
        "willow weaving",
        "nettle soup",
        "lavender pruning",
        "coracle racing",
        "preserving",
    ]
    paths = []
    for n in range(1, documents + 1):
        body = [rng.choice(_OPENINGS), ""]
        for _ in range(rng.randint(3, 6)):
            a, b = rng.sample(topic_words, 2)
            body.append(
                rng.choice(_SENTENCES).format(
                    person=f"{rng.choice(_FIRST)} {rng.choice(_SURNAME_HEADS)}"
                    f"{rng.choice(_SURNAME_TAILS)}",
                    # Saltmere is two places: an annotator cannot tell which from the name
                    town="Saltmere" if rng.random() < 0.15 else labels[rng.choice(towns)],
                    a=a,
                    b=b,
                )
            )
        body[2] = body[2][0].upper() + body[2][1:]
        paths.append(_write(folder / f"article-{n:03d}.txt", body))
    return paths

"""Suggestions ("did you mean …?") for an unknown name: closest first, then how many more.

One helper for every list of known names (materials, sizes, fixture types, ids in the
file, rule ids, valves): :func:`suggest` ranks the known names against what was
written and returns the hint text. It never cuts a list silently: when it shows only
some names it says how many others there are and where the full list is.

Ranking, best first:

1. the same name but for letter case, ``_`` / ``-`` / spaces;
2. names that contain what was written, or that it contains (``closet`` →
   every ``water-closet-…`` type);
3. names close in spelling (:func:`difflib.get_close_matches`, ratio ≥ 0.6, or 0.5
   for names of up to three characters);
4. names whose title shares a word with what was written, after the everyday
   words in :data:`EVERYDAY_WORDS` are turned into the trade's words
   (``toilet`` → "water closet"), when titles are given.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping

#: Names offered as "did you mean"; a list of known names this short is shown whole.
SHOWN = 8

#: Everyday words for fixtures and the words the catalog's titles use for them
#: (plain English usage; the titles follow IPC Table E103.3(2) wording).
EVERYDAY_WORDS: dict[str, str] = {
    "toilet": "water closet",
    "wc": "water closet",
    "commode": "water closet",
    "loo": "water closet",
    "tub": "bathtub",
    "bath": "bathtub",
    "basin": "lavatory",
    "washbasin": "lavatory",
    "washing": "clothes washer",
    "washer": "clothes washer",
    "laundry": "laundry tray clothes washer",
    "faucet": "sink lavatory",
    "tap": "sink lavatory hose bibb",
    "spigot": "hose bibb",
    "mop": "service sink",
    "fridge": "ice maker refrigerator",
    "refrigerator": "ice maker refrigerator",
    "fountain": "drinking fountain",
}

_SPLIT = re.compile(r"[^a-z0-9]+")


def _fold(text: str) -> str:
    return _SPLIT.sub("", text.lower())


def _words(text: str) -> set[str]:
    return {w for w in _SPLIT.split(text.lower()) if len(w) >= 3 or w == "wc"}


def closest(
    word: str, choices: Iterable[str], titles: Mapping[str, str] | None = None
) -> list[str]:
    """The known names that match ``word``, best first (see the module docstring)."""
    import difflib  # only when a name is wrong

    names = sorted(set(choices))
    folded = {name: _fold(name) for name in names}
    target = _fold(word)
    ranked: list[str] = [n for n in names if target and folded[n] == target]
    if len(target) >= 3:
        ranked += [
            n for n in names if target in folded[n] or (len(folded[n]) >= 3 and folded[n] in target)
        ]
    cutoff = 0.5 if len(target) <= 3 else 0.6  # "J2" is one letter from "J1": ratio 0.5
    by_fold = {folded[n]: n for n in names}
    ranked += [
        by_fold[f] for f in difflib.get_close_matches(target, list(by_fold), n=SHOWN, cutoff=cutoff)
    ]
    heads: dict[str, list[str]] = {}  # "DW1:hot" is also compared as "DW1"
    for n in names:
        if ":" in n:
            heads.setdefault(_fold(n.split(":")[0]), []).append(n)
    for f in difflib.get_close_matches(target, list(heads), n=SHOWN, cutoff=cutoff):
        ranked += heads[f]
    if titles:
        wanted = _words(word)
        for w in list(wanted):
            wanted |= _words(EVERYDAY_WORDS.get(w, ""))
        if wanted:
            scored = []
            for n in names:
                shared = len(wanted & (_words(titles.get(n, "")) | _words(n)))
                if shared:
                    scored.append((-shared, n))
            best = min(scored)[0] if scored else 0
            ranked += [n for score, n in sorted(scored) if score == best]
    return list(dict.fromkeys(ranked))  # first place wins, order kept


def suggest(
    word: str,
    choices: Iterable[str],
    where: str,
    titles: Mapping[str, str] | None = None,
    what: str = "known names",
) -> str:
    """Hint for an unknown ``word``: the closest ``choices`` first, then how many others.

    ``where`` says where the whole list is (``"rulecheck rules"``, ``"the file's
    points"``); ``titles`` maps a name to its descriptive title, searched by word.
    """
    if isinstance(choices, (set, frozenset)):
        names = sorted(choices)
    else:  # a table's own order (sizes smallest first), else alphabetical
        names = list(dict.fromkeys(choices))
    if not names:
        return f"there are none ({where})"
    matches = closest(word, names, titles)[:SHOWN]
    if len(names) <= SHOWN:
        rest = ", ".join(n for n in names if n not in matches)
        if not matches:
            return f"{what}: {rest}"
        lead = "did you mean " + ", ".join(f"'{m}'" for m in matches) + "?"
        return f"{lead} the others: {rest}" if rest else lead
    others = len(names) - len(matches)
    if matches:
        shown = ", ".join(f"'{m}'" for m in matches)
        return f"did you mean {shown}? {others} other{'s' if others != 1 else ''}: see {where}"
    first = sorted(names)[:SHOWN]
    return (
        f"none of the {len(names)} {what} is close (the first {SHOWN} alphabetically: "
        f"{', '.join(first)}); see {where}"
    )

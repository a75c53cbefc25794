"""Invented names for the demo league: the league, its teams and its players.

Everything here is made up. Team names pair a colour or material with a small
animal or object and name no place; player names are built from syllables
chosen to sound like names without being anyone's. The same seed always
gives the same names.
"""

from __future__ import annotations

import numpy as np

__all__ = ["LEAGUE_NAME", "TEAM_NAMES", "player_names", "team_code"]

#: The demo league's name (invented).
LEAGUE_NAME = "Quillmere Hoop League"

#: Twelve invented team names, no place in any of them.
TEAM_NAMES: tuple[str, ...] = (
    "Copper Kites",
    "Slate Herons",
    "Juniper Otters",
    "Cobalt Cranes",
    "Saffron Hares",
    "Basalt Wrens",
    "Indigo Moths",
    "Ochre Lanterns",
    "Lichen Kestrels",
    "Garnet Ferns",
    "Pewter Newts",
    "Tidewater Finches",
)

_FIRST_START = (
    "Al", "Bren", "Cor", "Dav", "Ebb", "Fen", "Gal", "Hes", "Ilm", "Jor",
    "Kes", "Lun", "Mav", "Nel", "Orr", "Pav", "Quen", "Ros", "Sel", "Tav",
    "Ulv", "Vin", "Wes", "Yor", "Zan",
)
_FIRST_END = ("ric", "eno", "ia", "ander", "wyn", "eth", "oa", "ek", "is", "aro", "ette", "ul", "iel", "omir")
_LAST_START = (
    "Ash", "Brack", "Cald", "Dunn", "Eld", "Farr", "Gless", "Holt", "Ivers", "Kettle",
    "Lark", "Mire", "Norr", "Oaken", "Pell", "Quarr", "Rook", "Sark", "Thorn", "Umber",
    "Vell", "Wick", "Yarrow", "Zell",
)
_LAST_MIDDLE = ("", "a", "en", "i", "o")
_LAST_END = ("by", "well", "mont", "vane", "holm", "crest", "ridge", "more", "stead", "wold", "garth", "ings")


def team_code(name: str) -> str:
    """Three-letter code of a team: first letter of the first word, first two of the last.

    Examples
    --------
    >>> team_code("Copper Kites")
    'CKI'
    """
    first, *_, last = name.split()
    return (first[0] + last[:2]).upper()


def player_names(count: int, *, rng) -> list[str]:
    """``count`` distinct invented "First Last" names, in a seeded order.

    Parameters
    ----------
    count : int
        How many names (at most a few thousand).
    rng : numpy.random.Generator
        Source of randomness.

    Returns
    -------
    list of str
        Distinct names.

    Examples
    --------
    >>> import numpy as np
    >>> names = player_names(3, rng=np.random.default_rng(1))
    >>> len(set(names)), all(len(n.split()) == 2 for n in names)
    (3, True)
    """
    rng = np.random.default_rng(rng)
    seen: set[str] = set()
    names: list[str] = []
    while len(names) < count:
        first = str(rng.choice(_FIRST_START)) + str(rng.choice(_FIRST_END))
        start = str(rng.choice(_LAST_START))
        middle = str(rng.choice(_LAST_MIDDLE))
        end = str(rng.choice(_LAST_END))
        if start.endswith("e") or end[0] in "aeiou":
            middle = ""  # no vowel pile-ups ("Kettleiby", "Farroings")
        last = start + middle + end
        name = f"{first} {last.capitalize()}"
        if name not in seen:
            seen.add(name)
            names.append(name)
    return names

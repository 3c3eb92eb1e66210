"""Words for how hard a climb is for its riders, beside its band: the plan's words
(:mod:`cardgen.plan.difficulty`), grouped for a sheet that serves several riders."""

from __future__ import annotations

from collections.abc import Sequence

from cardgen.plan.difficulty import WORDS


def _by_word(riders: Sequence[tuple[str, Sequence[str]]]) -> list[tuple[str, list[str]]]:
    """(word, names of the riders it applies to), most severe word first."""
    return [(w, [n for n, said in riders if w in said]) for w in WORDS if any(w in s for _, s in riders)]


def named(band: str, riders: Sequence[tuple[str, Sequence[str]]]) -> str:
    """The band, and for the riders ((name, words) each) where it understates their
    plans, each word with who it applies to ("all 4" when it is everyone):
    ``easy by its band; for these riders: crawl (Sam), above CP (all 4)``."""
    groups = _by_word(riders)
    if not groups:
        return band
    said = [
        f"{w} ({'all ' + str(len(riders)) if len(who) == len(riders) > 1 else ', '.join(who)})"
        for w, who in groups
    ]
    return f"{band} by its band; for these riders: {', '.join(said)}"


def counted(band: str, riders: Sequence[Sequence[str]]) -> str:
    """The band, and how many of the riders (each their words) each word applies to:
    ``easy; for riders: crawl (1 of 4), above CP (4 of 4)``."""
    groups = _by_word([("", w) for w in riders])
    if not groups:
        return band
    said = [f"{w} ({len(who)} of {len(riders)})" for w, who in groups]
    return f"{band}; for riders: {', '.join(said)}"

"""Which catalogue family a stock row's family text names.

:func:`recognise_family` scores the built-in families (name, title, ``kind name``) with
rapidfuzz and refuses a guess between kinds or X classes; :func:`catalogue_families` lists the
families an imported row can belong to.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Final

from sqlalchemy import select
from sqlalchemy.orm import Session

from ..errors import BadValueError
from .models import Part

#: a family text is recognised when its best score reaches this (0-100)
FAMILY_THRESHOLD: Final[float] = 80.0
#: two families closer than this to the best score count as a tie
FAMILY_TIE: Final[float] = 4.0
#: within a tie, the best family's whole-text score must lead by this much
FAMILY_CLEAR: Final[float] = 8.0


@dataclass(frozen=True)
class FamilyInfo:
    """A catalogue family an imported row can belong to."""

    name: str
    kind: str
    title: str
    safety_class: str | None


def _family_titles() -> dict[str, str]:
    """Family name -> title, from the open catalogue's family files."""
    from .build import load_families

    return {family.name: str(family.data.get("title", family.name)) for family in load_families()}


def catalogue_families(session: Session) -> list[FamilyInfo]:
    """The built-in families present in the catalogue (name, kind, title, safety class)."""
    rows = session.execute(
        select(Part.family, Part.kind, Part.safety_class).where(Part.source == "builtin").distinct()
    ).all()
    titles = _family_titles()
    seen: dict[str, FamilyInfo] = {}
    for name, kind, safety_class in rows:
        if name not in seen:
            seen[name] = FamilyInfo(name, kind, titles.get(name, name), safety_class)
    return sorted(seen.values(), key=lambda family: family.name)


def _fnorm(text: str) -> str:
    """Family text for matching: lower-case words and numbers apart (``105C`` -> ``105 c``,
    ``0w5`` -> ``0.5 w``, ``5x20`` -> ``5 x 20``); safety classes stay whole (``x2``)."""
    lowered = re.sub(r"(\d)w(\d)", r"\1.\2w", str(text).lower().replace("°", ""))
    return " ".join(re.findall(r"\b[xy][1-4]\b|\d+(?:\.\d+)?|[a-z]+", lowered))


def _family_texts(family: FamilyInfo) -> list[str]:
    """The texts a family is recognised by: its name, its title and ``kind name``."""
    return [_fnorm(family.name), _fnorm(family.title), _fnorm(f"{family.kind} {family.name}")]


class AmbiguousFamilyError(BadValueError):
    """A family text that fits several families; ``candidates`` lists them, best first."""

    def __init__(self, message: str, candidates: Sequence[FamilyInfo]) -> None:
        super().__init__(message)
        self.candidates = tuple(candidates)


def recognise_family(text: str, families: Sequence[FamilyInfo]) -> FamilyInfo:
    """The family a stock row's family text names.

    Each family is scored by rapidfuzz ``token_set_ratio`` against its name, its title and
    ``kind name`` (all lower-cased, punctuation dropped, digits apart from letters). The best
    must reach :data:`FAMILY_THRESHOLD`. Families within :data:`FAMILY_TIE` of it are a tie:
    a tie with another kind or safety class is refused (a general-purpose capacitor must never
    be taken for an X capacitor by a guess); a tie within one kind is broken by
    ``token_sort_ratio`` (the closer whole text) only when it leads by :data:`FAMILY_CLEAR`.
    Raises :class:`BadValueError` naming the nearest families (an
    :class:`AmbiguousFamilyError` carrying the tied families for a tie).
    """
    from rapidfuzz import fuzz

    wanted = _fnorm(text)
    if not wanted:
        raise BadValueError("no family given; name one of the catalogue's families")
    exact = [
        family
        for family in families
        if text.strip().lower() == family.name.lower() or wanted == _fnorm(family.name)
    ]
    if exact:
        return exact[0]
    scored = []
    for family in families:
        texts = _family_texts(family)
        primary = max(fuzz.token_set_ratio(wanted, known) for known in texts)
        secondary = max(fuzz.token_sort_ratio(wanted, known) for known in texts)
        scored.append((primary, secondary, family))
    scored.sort(key=lambda entry: (-entry[0], -entry[1], entry[2].name))
    nearest = ", ".join(f"{family.name} ({family.title})" for _, _, family in scored[:3])
    if not scored or scored[0][0] < FAMILY_THRESHOLD:
        raise BadValueError(f"family {text!r} not recognised; nearest: {nearest}")
    top_primary, top_secondary, best = scored[0]
    close = [entry for entry in scored[1:] if entry[0] >= top_primary - FAMILY_TIE]
    # another kind or safety class close by: never guess; same kind: only a clear winner
    rivals = [
        family
        for _, secondary, family in close
        if family.kind != best.kind
        or (family.safety_class or "") != (best.safety_class or "")
        or secondary > top_secondary - FAMILY_CLEAR
    ]
    if rivals:
        names = ", ".join(family.name for family in [best, *rivals[:3]])
        raise AmbiguousFamilyError(
            f"family {text!r} is ambiguous: it fits {names}; write the family name",
            [best, *rivals],
        )
    return best

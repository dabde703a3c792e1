"""Reference designators of a BOM cell: grouped references and ranges to single designators.

Part of step 4 of :mod:`.bom`: ``R2, R3``, ``R2 R3``, ``R2-R4``, ``R2..R4`` and ``R2-4`` are
expanded in order; a range with two prefixes, a reversed or huge range, or a token that is not
a designator is refused.
"""

from __future__ import annotations

import re
from typing import Final

from ..errors import BadValueError

__all__ = ["expand_refs"]

_MAX_RANGE: Final[int] = 1000

_REF_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_.]*\d[A-Za-z0-9_.]*$")
_RANGE_RE = re.compile(
    r"^(?P<p1>[A-Za-z][A-Za-z_]*)(?P<a>\d+)\s*(?:-|\.\.|–|—|to)\s*(?P<p2>[A-Za-z][A-Za-z_]*)?(?P<b>\d+)$"
)


def expand_refs(text: str) -> list[str]:
    """Expand a grouped reference cell into single designators, in order.

    Separators: comma, semicolon, whitespace. Ranges ``R2-R4``, ``R2..R4``, ``R2-4``, ``R2 - R4``
    with one prefix. Raises :class:`BadValueError` for a range with two prefixes, a reversed or
    huge range, or a token that is not a designator.

    >>> expand_refs("R2, R3")
    ['R2', 'R3']
    >>> expand_refs("R2-R4 C1")
    ['R2', 'R3', 'R4', 'C1']
    """
    s = re.sub(r"\s*(-|\.\.|–|—)\s*", r"\1", text.strip())
    out: list[str] = []
    for token in re.split(r"[,;\s]+", s):
        if not token:
            continue
        m = _RANGE_RE.match(token)
        if m:
            p1, p2 = m.group("p1"), m.group("p2") or m.group("p1")
            if p1.upper() != p2.upper():
                raise BadValueError(f"range {token!r} mixes prefixes {p1} and {p2}")
            if max(len(m.group("a")), len(m.group("b"))) > 9:
                raise BadValueError(
                    f"range {_shown(token)!r} has a designator number longer than 9 digits"
                )
            a, b = int(m.group("a")), int(m.group("b"))
            if b < a:
                raise BadValueError(f"range {token!r} runs backwards; write {p1}{b}-{p1}{a}")
            if b - a >= _MAX_RANGE:
                raise BadValueError(
                    f"range {token!r} spans {b - a + 1} parts; more than {_MAX_RANGE}"
                )
            out.extend(f"{p1}{k}" for k in range(a, b + 1))
        elif _REF_RE.match(token):
            out.append(token)
        else:
            raise BadValueError(
                f"{_shown(token)!r} is not a reference designator (e.g. R1, C12, D3)"
            )
    return out


def _shown(token: str) -> str:
    """A token short enough for a one-line error (the first 40 characters)."""
    return token if len(token) <= 40 else token[:40] + "..."

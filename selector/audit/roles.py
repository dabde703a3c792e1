"""Which part of a BOM does which job in the dropper: given, read from a roles file, or inferred.

Roles (the rule engine's, plus ``other`` for load-side parts the audit leaves alone):
``x_capacitor, series_resistor, bleeder, rectifier, zener, reservoir, fuse, other``.

Inference, for parts the user did not name (each decision is written to ``RoleMap.notes``):

* an X/Y-class capacitor, a film capacitor, or a capacitor of unknown dielectric rated >= 200 V
  DC or >= 100 V AC -> ``x_capacitor``; several are taken as in parallel (capacitances add);
* an electrolytic -> ``reservoir`` (several of one value: in parallel);
* a resistor >= 100 kohm -> ``bleeder``; several are taken as one string in series across the X
  capacitor (resistances add);
* a resistor < 100 kohm -> ``series_resistor``; several of one value and package are taken as in
  series (one per line); several of different values are ambiguous (a load-side resistor?) and
  raise an error naming them and the ``--role`` that resolves it;
* a fusible resistor is the series resistor and, with no fuse fitted, also the fuse;
* a Zener -> ``zener`` (several: in series, voltages add); a bridge, or four or more rectifier
  diodes -> ``rectifier`` of a bridge; one diode with a Zener -> ``rectifier`` of a half-wave;
* a fuse -> ``fuse``; a varistor -> ``varistor`` (across the line; one per board);
  everything else (ceramic capacitors, ICs, LEDs, thermistors, ...) -> other.

The 100 kohm split between series resistor and bleeder is common practice (no source): series
resistors are tens of ohms to a few kohm, bleeders hundreds of kohm to a few Mohm.

A roles file is TOML::

    [roles]                 # every board
    C1 = "x_capacitor"
    R7 = "other"

    [boards."vent-timer".roles]   # one board of a multi-board BOM
    R9 = "bleeder"
"""

from __future__ import annotations

import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Final

from ..errors import BadValueError
from .bom import BomPart
from .ratings import Ratings

__all__ = [
    "AUDIT_ROLES",
    "BLEEDER_MIN_OHM",
    "Assigned",
    "RoleMap",
    "infer_roles",
    "load_roles_file",
    "parse_role_options",
]

AUDIT_ROLES: Final[tuple[str, ...]] = (
    "x_capacitor",
    "series_resistor",
    "bleeder",
    "rectifier",
    "zener",
    "reservoir",
    "fuse",
    "varistor",
    "other",
)
_ROLE_ALIASES: Final[dict[str, str]] = {
    "ignore": "other",
    "load": "other",
    "none": "other",
    "x_cap": "x_capacitor",
    "xcap": "x_capacitor",
    "series_r": "series_resistor",
    "series": "series_resistor",
    "bridge": "rectifier",
    "diode": "rectifier",
    "electrolytic": "reservoir",
    "mov": "varistor",
}
#: resistors at or above this are bleeders, below it series resistors [ohm] (common practice)
BLEEDER_MIN_OHM: Final[float] = 100e3

_CAP_KINDS = ("x_capacitor", "film_capacitor", "capacitor")


@dataclass(frozen=True)
class Assigned:
    """One part with its ratings and role; ``how`` is 'given', 'roles file' or 'inferred'."""

    part: BomPart
    ratings: Ratings
    role: str
    how: str
    also_fuse: bool = False


@dataclass
class RoleMap:
    """Roles of one board's parts, the topology they imply, and what was inferred."""

    board: str
    parts: list[Assigned]
    topology: str | None
    notes: list[str] = field(default_factory=list)

    def by_role(self, role: str) -> list[Assigned]:
        return [a for a in self.parts if a.role == role or (role == "fuse" and a.also_fuse)]


def _role_name(text: str, where: str = "") -> str:
    key = text.strip().lower().replace("-", "_").replace(" ", "_")
    key = _ROLE_ALIASES.get(key, key)
    if key not in AUDIT_ROLES:
        from rapidfuzz import process

        match = process.extractOne(key, AUDIT_ROLES)
        hint = f"; did you mean '{match[0]}'?" if match and match[1] >= 60 else ""
        raise BadValueError(f"{where}unknown role {text!r}{hint}; roles: {', '.join(AUDIT_ROLES)}")
    return key


def parse_role_options(options: Sequence[str]) -> dict[str, str]:
    """``["C1=x_capacitor", "R4=other"]`` -> ``{"C1": "x_capacitor", "R4": "other"}``.

    ``BOARD:REF=ROLE`` names one board of a multi-board BOM (key ``"BOARD:REF"``).
    """
    out: dict[str, str] = {}
    for opt in options:
        ref, sep, role = opt.partition("=")
        if not sep or not ref.strip() or not role.strip():
            raise BadValueError(f"--role {opt!r}: write REF=ROLE, e.g. --role C1=x_capacitor")
        out[ref.strip().upper()] = _role_name(role, f"--role {opt!r}: ")
    return out


def load_roles_file(path: str | Path) -> tuple[dict[str, str], dict[str, dict[str, str]]]:
    """(roles for every board, roles per board) from a TOML roles file (see module docstring)."""
    p = Path(path)
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8-sig"))
    except FileNotFoundError:
        raise BadValueError(f"roles file {p}: no such file") from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise BadValueError(f"roles file {p}: not valid UTF-8 TOML ({exc})") from None
    unknown = set(data) - {"roles", "boards"}
    if unknown:
        raise BadValueError(
            f"roles file {p}: unknown table(s) {', '.join(sorted(unknown))}; "
            "use [roles] and [boards.NAME.roles]"
        )

    def table(obj: object, where: str) -> dict[str, str]:
        if not isinstance(obj, Mapping):
            raise BadValueError(f'roles file {p}: {where} must be a table of REF = "role"')
        out = {}
        for ref, role in obj.items():
            if not isinstance(role, str):
                raise BadValueError(f"roles file {p}: {where}.{ref} must be a string role")
            out[str(ref).upper()] = _role_name(role, f"roles file {p}, {where}.{ref}: ")
        return out

    common = table(data.get("roles", {}), "roles")
    boards: dict[str, dict[str, str]] = {}
    for name, sub in (data.get("boards") or {}).items():
        if not isinstance(sub, Mapping) or set(sub) - {"roles"}:
            raise BadValueError(f"roles file {p}: boards.{name} must hold one [roles] table")
        boards[str(name)] = table(sub.get("roles", {}), f"boards.{name}.roles")
    return common, boards


def _label(items: Sequence[tuple[BomPart, Ratings]]) -> str:
    return ", ".join(p.ref for p, _ in items)


def infer_roles(
    board: str,
    items: Sequence[tuple[BomPart, Ratings]],
    explicit: Mapping[str, str] | None = None,
    explicit_how: str | Mapping[str, str] = "given",
) -> RoleMap:
    """Assign a role to every part of one board (see the module docstring for the rules).

    ``explicit`` maps upper-case designators to roles and wins over a role the BOM's own role
    column gives (``how`` = 'BOM'), which wins over inference. Raises
    :class:`BadValueError` naming the parts when the BOM is ambiguous.
    """
    explicit = dict(explicit or {})
    refs = {p.ref.upper() for p, _ in items}
    for ref in explicit:
        if ref not in refs:
            on = f" on board '{board}'" if board else ""
            raise BadValueError(f"--role names {ref}, which is not in the BOM{on}")
    out: list[Assigned] = []
    notes: list[str] = []
    rest: list[tuple[BomPart, Ratings]] = []
    for p, r in items:
        role = explicit.get(p.ref.upper())
        if role is not None:
            how = (
                explicit_how
                if isinstance(explicit_how, str)
                else explicit_how.get(p.ref.upper(), "given")
            )
            out.append(Assigned(p, r, role, how))
        elif p.role:
            out.append(Assigned(p, r, _role_name(p.role, f"row {p.row}, role of {p.ref}: "), "BOM"))
        else:
            rest.append((p, r))

    def take(group: Sequence[tuple[BomPart, Ratings]], role: str, note: str | None = None):
        for p, r in group:
            out.append(Assigned(p, r, role, "inferred"))
        if note and group:
            notes.append(note)

    have = {a.role for a in out}
    xcaps, reservoirs, resistors, zeners, bridges, diodes, fuses, other = ([] for _ in range(8))
    varistors: list[tuple[BomPart, Ratings]] = []
    for p, r in rest:
        k = r.kind
        if k == "x_capacitor" or k == "film_capacitor":
            xcaps.append((p, r))
        elif k == "capacitor":
            hv = (r.rated_voltage_v or 0) >= 200 or (r.rated_voltage_ac_v or 0) >= 100
            if hv:
                xcaps.append((p, r))
            elif (r.value or 0) >= 1e-6:
                reservoirs.append((p, r))
            else:
                other.append((p, r))
        elif k == "electrolytic":
            reservoirs.append((p, r))
        elif k == "resistor":
            resistors.append((p, r))
        elif k == "zener":
            zeners.append((p, r))
        elif k == "bridge":
            bridges.append((p, r))
        elif k == "diode":
            diodes.append((p, r))
        elif k == "fuse":
            fuses.append((p, r))
        elif k == "varistor":
            varistors.append((p, r))
        else:
            other.append((p, r))

    if "x_capacitor" not in have:
        take(
            xcaps,
            "x_capacitor",
            f"x_capacitor: {_label(xcaps)} (film / safety-class capacitor"
            + (", taken as in parallel; capacitances add)" if len(xcaps) > 1 else ")"),
        )
    elif xcaps:
        take(xcaps, "other", f"other: {_label(xcaps)} (X capacitor named explicitly)")
    if "reservoir" not in have:
        if len({r.value for _, r in reservoirs}) > 1:
            raise BadValueError(
                f"{_where(board)}cannot tell which electrolytic is the reservoir: "
                f"{_describe(reservoirs)}; say which with --role "
                + " ".join(f"{p.ref}=reservoir|other" for p, _ in reservoirs[:2])
            )
        take(reservoirs, "reservoir", f"reservoir: {_label(reservoirs)} (electrolytic)")
    else:
        take(reservoirs, "other")

    bleeders = [(p, r) for p, r in resistors if (r.value or 0) >= BLEEDER_MIN_OHM]
    series = [(p, r) for p, r in resistors if (r.value or 0) < BLEEDER_MIN_OHM]
    if "bleeder" not in have:
        take(
            bleeders,
            "bleeder",
            f"bleeder: {_label(bleeders)} (>= 100 kohm"
            + (", taken as one string in series)" if len(bleeders) > 1 else ")"),
        )
    else:
        take(bleeders, "other")
    if "series_resistor" not in have:
        kinds = {(r.value, r.package, r.fusible) for _, r in series}
        fusible = [(p, r) for p, r in series if r.fusible]
        plain = [(p, r) for p, r in series if not r.fusible]
        if len(kinds) > 1 and not (
            len(fusible) == 1 and len({(r.value, r.package) for _, r in plain}) <= 1
        ):
            raise BadValueError(
                f"{_where(board)}cannot tell which resistor is the series resistor: "
                f"{_describe(series)}; say which with --role, e.g. "
                + " ".join(f"--role {p.ref}=series_resistor" for p, _ in series[:1])
                + " "
                + " ".join(f"--role {p.ref}=other" for p, _ in series[1:3])
            )
        take(
            series,
            "series_resistor",
            f"series_resistor: {_label(series)} (< 100 kohm"
            + (", taken as in series, resistances add)" if len(series) > 1 else ")"),
        )
    else:
        take(series, "other")

    if "zener" not in have:
        take(
            zeners,
            "zener",
            f"zener: {_label(zeners)}" + (" (in series, voltages add)" if len(zeners) > 1 else ""),
        )
    else:
        take(zeners, "other")

    topology: str | None = None
    rect_given = [a for a in out if a.role == "rectifier"]
    if rect_given:
        kinds = {a.ratings.kind for a in rect_given}
        topology = "bridge" if "bridge" in kinds or len(rect_given) >= 4 else "half-wave"
        take(bridges + diodes, "other")
    elif bridges:
        if len(bridges) > 1:
            raise BadValueError(
                f"{_where(board)}two bridges ({_label(bridges)}); name the dropper's with "
                f"--role {bridges[0][0].ref}=rectifier --role {bridges[1][0].ref}=other"
            )
        take(bridges, "rectifier", f"rectifier: {_label(bridges)} (bridge)")
        take(diodes, "other", f"other: {_label(diodes)} (diodes beside a bridge)")
        topology = "bridge"
    elif len(diodes) >= 4:
        if len(diodes) > 4:
            raise BadValueError(
                f"{_where(board)}{len(diodes)} diodes ({_label(diodes)}): cannot tell which four "
                "form the bridge; name the others with --role REF=other"
            )
        take(diodes, "rectifier", f"rectifier: {_label(diodes)} (four diodes: a bridge)")
        topology = "bridge"
    elif len(diodes) == 1:
        take(diodes, "rectifier", f"rectifier: {_label(diodes)} (one diode: half-wave)")
        topology = "half-wave"
    elif diodes:
        raise BadValueError(
            f"{_where(board)}{len(diodes)} diodes ({_label(diodes)}): neither a bridge (4) nor "
            "half-wave (1); name the rectifier with --role REF=rectifier, the rest REF=other"
        )

    if "fuse" not in have:
        if len(fuses) > 1:
            raise BadValueError(
                f"{_where(board)}several fuses ({_label(fuses)}); name the dropper's with "
                f"--role {fuses[0][0].ref}=fuse and the others =other"
            )
        take(fuses, "fuse", f"fuse: {_label(fuses)}")
    else:
        take(fuses, "other")
    if "varistor" not in have:
        if len(varistors) > 1:
            raise BadValueError(
                f"{_where(board)}several varistors ({_label(varistors)}); name the one across "
                f"the line with --role {varistors[0][0].ref}=varistor and the others =other"
            )
        take(varistors, "varistor", f"varistor: {_label(varistors)} (across the line)")
    else:
        take(varistors, "other")
    take(other, "other", f"other (not audited): {_label(other)}" if other else None)

    roles_now = [a.role for a in out]
    if "fuse" not in roles_now:
        fusible = [
            i for i, a in enumerate(out) if a.role == "series_resistor" and a.ratings.fusible
        ]
        if fusible:
            for i in fusible:
                a = out[i]
                out[i] = Assigned(a.part, a.ratings, a.role, a.how, also_fuse=True)
            notes.append(
                f"fuse: {', '.join(out[i].part.ref for i in fusible)} (fusible series resistor)"
            )
    order = {p.ref: i for i, (p, _) in enumerate(items)}
    out.sort(key=lambda a: order[a.part.ref])
    return RoleMap(board=board, parts=out, topology=topology, notes=notes)


def _where(board: str) -> str:
    return f"board '{board}': " if board else ""


def _describe(items: Sequence[tuple[BomPart, Ratings]]) -> str:
    from ..units import format_value

    bits = []
    for p, r in items:
        unit = "ohm" if r.kind == "resistor" else "F"
        v = format_value(r.value, unit) if r.value else "?"
        bits.append(f"{p.ref} ({v}{' ' + r.package if r.package else ''}, row {p.row})")
    return ", ".join(bits)

"""Derating policy: the limits the rule engine holds each part to.

Defaults follow DOMAIN.md section 4. Marks: [S] checked in a published source, [M] from memory,
[P] common practice, no source. A user overrides any of them with a TOML file of flat
``key = number`` lines (``dropper design --policy FILE.toml``); an unknown key or a bad value
names the file, the key and the valid keys.

Example file::

    # stricter than the defaults
    series_r_power_fraction = 0.5
    load_margin = 0.2
"""

from __future__ import annotations

import dataclasses
import math
import re
import tomllib
from dataclasses import dataclass, fields
from pathlib import Path
from typing import Any, Final

from .errors import BadValueError

__all__ = [
    "COMMON_STANDBY_LIMIT_W",
    "POLICY_NOTES",
    "PRODUCT_CLASSES",
    "Policy",
    "load_policy",
    "product_class_limit",
    "standby_bound_w",
]


@dataclass(frozen=True)
class Policy:
    """Derating limits (fractions are of the part's rating; SI units elsewhere)."""

    #: series resistor: continuous power <= derated rating x this [P]
    series_r_power_fraction: float = 0.6
    #: bleeder: continuous power <= derated rating x this [P]
    bleeder_power_fraction: float = 0.6
    #: resistors: peak voltage across one element <= limiting element voltage x this [P]
    limiting_voltage_fraction: float = 0.8
    #: resistors: a short pulse (switch-on, surge) may reach this multiple of the limiting
    #: voltage before the fraction above is applied; IEC 60115-1 short-time overload is
    #: 2.5 x rated voltage capped at 2 x limiting voltage [M]
    pulse_voltage_factor: float = 2.0
    #: resistors: pulse energy (switch-on, surge) <= family pulse capability x this [P]
    pulse_energy_fraction: float = 1.0
    #: Zener: worst-case dissipation <= power derated to max ambient x this [P]
    zener_power_fraction: float = 0.5
    #: reservoir: highest bus voltage <= rated voltage x this (rated >= Vz_max / 0.8) [P]
    reservoir_voltage_fraction: float = 0.8
    #: reservoir: ripple current <= rated ripple current x this [P]
    reservoir_ripple_fraction: float = 1.0
    #: reservoir: temperature class >= max ambient + this (self-heating, board) [C] [P]
    reservoir_temp_margin_c: float = 20.0
    #: X capacitor: max mains rms <= rated AC voltage x this [P]
    x_cap_voltage_fraction: float = 1.0
    #: X capacitor: dV/dt at switch-on and surge <= rated dV/dt x this [P]
    dvdt_fraction: float = 1.0
    #: rectifier: max reverse voltage (mains crest) <= VRRM x this [P]
    rectifier_voltage_fraction: float = 1.0
    #: rectifier: switch-on peak current <= IFSM x this [P]
    rectifier_surge_fraction: float = 1.0
    #: fuse: switch-on I^2t <= fuse melting I^2t x this [P]
    fuse_i2t_fraction: float = 0.5
    #: Zener: surge peak power <= non-repetitive pulse power rating (scaled to the pulse's
    #: width) x this [P]
    zener_pulse_fraction: float = 1.0
    #: fuse: fault current with a shorted X capacitor >= rated current x this [P]
    fuse_fault_factor: float = 2.0
    #: fusible resistor: fault power with a shorted X capacitor >= rated power x this [P]
    fusible_fault_factor: float = 10.0
    #: whole: worst-case minimum DC current >= load x (1 + this) [P]
    load_margin: float = 0.1
    #: whole: no-load real power <= this [W], or None: no limit (the default; a product with a
    #: standby mode in the scope of EU Regulation 2023/826 sets 0.5 W [S], see PRODUCT_CLASSES)
    standby_limit_w: float | None = None
    #: whole: bus droop allowed during a load burst, fraction of the Zener voltage [P]
    burst_droop_fraction: float = 0.1
    #: reservoir: steady output ripple (peak to peak, worst corner) <= Zener voltage x this [P]
    output_ripple_fraction: float = 0.1

    def to_dict(self) -> dict[str, float | None]:
        return dataclasses.asdict(self)


#: the common off/standby limit, EU Regulation 2023/826 (from 2025) [S]; shown next to the
#: no-load power when no limit is set
COMMON_STANDBY_LIMIT_W: Final[float] = 0.5

#: product classes (``--product-class``): name -> (no-load power limit [W] or None, source).
#: The regulation covers products with an off or standby mode; an always-on sensor or controller
#: has none. DOMAIN.md section 10.
PRODUCT_CLASSES: Final[dict[str, tuple[float | None, str]]] = {
    "always-on": (None, "no off/standby mode: no standby limit applies [P]"),
    "standby": (0.5, "EU Regulation 2023/826, off/standby mode 0.5 W (from 2025) [S]"),
    "off-mode-2027": (0.3, "EU Regulation 2023/826, off mode 0.3 W (from 2027) [S]"),
    "standby-display": (
        0.8,
        "EU Regulation 2023/826, standby with information or status display ~0.8 W "
        "[M] from memory, not checked against the regulation's text",
    ),
    "network-standby": (
        2.0,
        "EU Regulation 2023/826, networked standby ~2 W [M] from memory, not checked "
        "against the regulation's text",
    ),
}


def product_class_limit(name: str) -> tuple[float | None, str]:
    """(limit [W] or None, source) of a product class; an unknown name raises BadValueError
    listing the valid ones. Example: 'standby' -> (0.5, 'EU Regulation 2023/826 ...')."""
    key = name.strip().lower().replace("_", "-").replace(" ", "-")
    if key not in PRODUCT_CLASSES:
        raise BadValueError(
            f"--product-class: unknown {name!r}; one of {', '.join(PRODUCT_CLASSES)}"
        )
    return PRODUCT_CLASSES[key]


def standby_bound_w(policy: Policy) -> float:
    """The no-load power limit as a bound for the screens [W]: +inf when none is set (so a
    bound computed against it stays a lower bound: nothing is pruned for standby)."""
    return math.inf if policy.standby_limit_w is None else float(policy.standby_limit_w)


#: which keys are fractions that must lie in (0, 1] (the rest only need to be > 0 / >= 0)
_FRACTIONS: Final[frozenset[str]] = frozenset(
    {
        "series_r_power_fraction",
        "bleeder_power_fraction",
        "limiting_voltage_fraction",
        "pulse_energy_fraction",
        "zener_power_fraction",
        "reservoir_voltage_fraction",
        "reservoir_ripple_fraction",
        "x_cap_voltage_fraction",
        "dvdt_fraction",
        "rectifier_voltage_fraction",
        "rectifier_surge_fraction",
        "fuse_i2t_fraction",
        "zener_pulse_fraction",
        "burst_droop_fraction",
        "output_ripple_fraction",
    }
)
_MAY_BE_ZERO: Final[frozenset[str]] = frozenset({"load_margin", "reservoir_temp_margin_c"})

#: one line per key: where the default comes from (shown by `--policy` errors and the JSON)
POLICY_NOTES: Final[dict[str, str]] = {
    "standby_limit_w": "none by default; EU Regulation 2023/826, off/standby mode 0.5 W [S] "
    "for products with a standby mode (--standby-limit, --product-class)",
    "pulse_voltage_factor": "IEC 60115-1 short-time overload, 2 x limiting voltage [M]",
}


def load_policy(path: str | Path | None) -> Policy:
    """The default policy, or the defaults overridden by the flat TOML file at ``path``.

    Raises BadValueError naming the file, and the line and key where there is one, for a file
    that cannot be read (missing, a folder, no permission, not UTF-8), TOML that does not parse
    (its line and column), a table or an unknown key (with the valid keys), a value that is not
    a finite number, or a value out of range.
    """
    if path is None:
        return Policy()
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise BadValueError(f"policy file {p} does not exist") from None
    except UnicodeDecodeError as exc:
        raise BadValueError(
            f"policy file {p}: not UTF-8 text (byte 0x{exc.object[exc.start]:02x} at offset "
            f"{exc.start}); save it as UTF-8"
        ) from None
    except OSError as exc:
        raise BadValueError(f"policy file {p}: cannot be read ({exc.strerror or exc})") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise BadValueError(f"policy file {p}: not valid TOML ({exc})") from None
    return policy_from_mapping(data, f"policy file {p}", key_lines(text))


# a top-level key (bare, or quoted) or a table header, at the start of a TOML line
_KEY_LINE = re.compile(r"""^\s*(\[{1,2})?\s*(?:"([^"]*)"|'([^']*)'|([A-Za-z0-9_-]+))""")


def key_lines(text: str) -> dict[str, int]:
    """The 1-based line where each top-level key (or table header) of a TOML text first
    appears, for messages; keys inside tables are not listed (a policy file has none).

    >>> key_lines("# strict\\nload_margin = 0.2\\n[extra]\\nx = 1\\n")
    {'load_margin': 2, 'extra': 3}
    """
    found: dict[str, int] = {}
    in_table = False
    for number, line in enumerate(text.splitlines(), start=1):
        m = _KEY_LINE.match(line)
        if m is None or line.lstrip().startswith("#"):
            continue
        header, key = m.group(1), next(g for g in m.group(2, 3, 4) if g is not None)
        if header:
            in_table = True
        elif in_table:
            continue
        found.setdefault(key, number)
    return found


def policy_from_mapping(
    data: dict[str, Any], source: str = "policy", lines: dict[str, int] | None = None
) -> Policy:
    """Defaults overridden by ``data`` (flat key -> number); errors name ``source``, the line
    (from ``lines``, key -> line number) and the key."""
    valid = [f.name for f in fields(Policy)]
    changes: dict[str, float] = {}
    for key, raw in data.items():
        where = source
        if lines and key in lines:
            where += f", line {lines[key]}"
        if isinstance(raw, dict):
            raise BadValueError(
                f"{where}: table [{key}] is not allowed; a policy file is flat "
                f"(key = number lines); valid keys: {', '.join(valid)}"
            )
        if key not in valid:
            hint = ""
            try:
                from rapidfuzz import process

                best = process.extractOne(key, valid)
                if best and best[1] >= 60:
                    hint = f" (did you mean '{best[0]}'?)"
            except ImportError:  # pragma: no cover - rapidfuzz is a dependency
                pass
            raise BadValueError(
                f"{where}: unknown key '{key}'{hint}; valid keys: {', '.join(valid)}"
            )
        # an integer too large for a float (1 followed by 400 zeros) is not finite either
        if (
            isinstance(raw, bool)
            or not isinstance(raw, (int, float))
            or (isinstance(raw, int) and abs(raw) > 1e300)
            or not math.isfinite(raw)
        ):
            shown = repr(raw) if len(repr(raw)) <= 40 else repr(raw)[:37] + "..."
            raise BadValueError(f"{where}: key '{key}' must be a finite number, got {shown}")
        value = float(raw)
        if key in _FRACTIONS and not 0.0 < value <= 1.0:
            raise BadValueError(f"{where}: key '{key}' is a fraction in (0, 1], got {value}")
        if key in _MAY_BE_ZERO:
            if value < 0:
                raise BadValueError(f"{where}: key '{key}' must be >= 0, got {value}")
        elif value <= 0:
            raise BadValueError(f"{where}: key '{key}' must be > 0, got {value}")
        changes[key] = value
    return dataclasses.replace(Policy(), **changes)

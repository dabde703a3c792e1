"""The HTML report: one self-contained file built from a command's JSON document.

``write_report(path, kind, result, circuit=None, waveforms=None)`` renders
``templates/report.html.j2`` with jinja2 (autoescape on) and writes it. The page holds, in order:
the requirement or circuit, a schematic with the chosen values (:mod:`.schematic`), the
worst-case figures with the corner that produced each, waveform plots over two mains cycles at
the worst corners and of the switch-on current (:mod:`.plots`), the parts with prices, every
check with its rule and source, and the safety cautions (:data:`selector.cautions.CAUTIONS`).

Every number shown carries its exact SI value from the JSON document in a ``data-si`` attribute
and its JSON key in ``data-key``, and the whole JSON document is embedded in a
``<script type="application/json" id="dropper-result">`` element, so the page can be checked
against (and machine-read like) the command's ``--json`` output.

The report reads the JSON document generically: numeric leaves whose key ends in a unit suffix
(``_a _v _w _f _ohm _s _j _hz _a2s``, ``_var _va`` for reactive and apparent power, and ``_c``
for degrees Celsius) are shown in engineering notation; unit-less fractions (keys with a word
such as ``tol``, ``tolerance``, ``loss``, ``fraction`` or ``margin``, see
:data:`FRACTION_WORDS`) as percentages (``0.1`` -> ``10 %``); other leaves are shown as text.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import json
import math
import os
import re
import tempfile
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import Any

import jinja2
import markupsafe

from .. import __version__
from ..cautions import CAUTIONS
from ..errors import BadValueError
from ..units import format_percent, format_value
from .plots import Trace, waveform_svg
from .schematic import TOPOLOGIES, schematic_svg

__all__ = ["FRACTION_WORDS", "REPORT_KINDS", "UNIT_SUFFIXES", "render_report", "write_report"]

REPORT_KINDS = ("check", "design", "audit")

#: JSON key suffix -> unit passed to ``format_value`` (longest suffixes first)
UNIT_SUFFIXES: tuple[tuple[str, str], ...] = (
    ("_a2s", "A2s"),
    ("_ohm", "ohm"),
    ("_var", "var"),
    ("_va", "VA"),
    ("_v_per_s", "V/s"),
    ("_hz", "Hz"),
    ("_mm2", "mm²"),
    ("_a", "A"),
    ("_v", "V"),
    ("_w", "W"),
    ("_f", "F"),
    ("_s", "s"),
    ("_j", "J"),
    ("_c", "°C"),
)

_TITLES = {
    "check": "Worst-case check of a capacitive-dropper supply",
    "design": "Capacitive-dropper design: selected parts",
    "audit": "Audit of a capacitive-dropper bill of materials",
}

# sections of the JSON that describe what was asked (shown first, as given)
_INPUT_KEYS = (
    "requirement",
    "circuit",
    "inputs",
    "mains",
    "tolerances",
    "conditions",
    "boards",
    "effective",
    "policy",
)
# sections holding computed figures (worst-case table); other numeric sections are added after
_FIGURE_KEYS = (
    "worst_case",
    "nominal",
    "inrush",
    "switch_on",
    "surge",
    "discharge",
    "startup",
    "power",
    "performance",
)
_PART_KEYS = ("parts", "bom", "selection", "lines", "roles")
_CHECK_KEYS = ("findings", "checks")
_SKIP_KEYS = frozenset({"cautions", "waveforms", *_PART_KEYS, *_CHECK_KEYS})


def _unit_of(key: str) -> str | None:
    for suffix, unit in UNIT_SUFFIXES:
        if key.endswith(suffix):
            return unit
    return None


def _quantity_name(key: str) -> str:
    for suffix, _ in UNIT_SUFFIXES:
        if key.endswith(suffix):
            key = key[: -len(suffix)]
            break
    return key.replace("_", " ")


#: words of a unit-less key that make its value a fraction shown as a percentage
#: (``mains_tolerance``, ``cap_tol``, ``cap_loss``, ``zener_power_fraction``, ``load_margin``)
FRACTION_WORDS = frozenset({"tol", "tolerance", "loss", "fraction", "margin"})


def _is_fraction_key(key: str) -> bool:
    """Whether a JSON key names a fraction (0.1 = 10 %): no unit suffix, and one of its
    ``_``-separated words is in :data:`FRACTION_WORDS`."""
    return _unit_of(key) is None and not FRACTION_WORDS.isdisjoint(key.lower().split("_"))


def _is_number(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def _show(key: str, value: Any) -> str:
    """Human text of one JSON leaf."""
    if value is None:
        return "–"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if _is_number(value):
        unit = _unit_of(key)
        if not math.isfinite(float(value)):
            return str(value)
        if key == "margin":  # a computed margin: signed, one decimal, so the column aligns
            return f"{float(value) * 100:+.1f} %"
        if unit is None and _is_fraction_key(key):
            return format_percent(float(value))
        if unit is None:
            return f"{value:.4g}" if isinstance(value, float) else str(value)
        if unit == "°C":
            return f"{value:.4g} °C"
        if unit in ("V/s", "mm²"):
            return f"{format_value(float(value), '', 3)}{unit}".replace(" ", "")
        return format_value(float(value), unit, 4)
    if isinstance(value, (list, tuple)):
        return ", ".join(_show(key, v) for v in value)
    if isinstance(value, Mapping):
        return "; ".join(f"{k}: {_show(str(k), v)}" for k, v in value.items())
    return str(value)


@dataclasses.dataclass(frozen=True)
class _Cell:
    """One shown value: text for people, ``key``/``si`` for checking against the JSON."""

    text: str
    key: str = ""
    si: str = ""

    @property
    def css(self) -> str:
        """``num`` (right-aligned, one line), ``text long`` (a word too long for a narrow
        column, e.g. a stock code, may break anywhere), ``text prose`` (a sentence: on a
        narrow page it may break anywhere too) or ``text`` (wraps between words and at the
        ``.`` and ``_`` joints of names, see :func:`_breakable`)."""
        if self.si:
            return "num"
        # a text cell wraps at spaces and where :func:`_breakable` puts a joint, nowhere else
        pieces = re.split(r"\s+|<wbr>", _JOINED_WORD.sub(_wrap_word_joints, self.text))
        if any(len(w) > 16 for w in pieces):
            return "text long"
        return "text prose" if len(self.text) > 30 else "text"

    @classmethod
    def of(cls, key: str, value: Any, path: str) -> _Cell:
        """``key`` picks the unit (its suffix), ``path`` locates the value in the JSON."""
        si = repr(float(value)) if _is_number(value) and math.isfinite(float(value)) else ""
        return cls(_show(key, value), path, si)


def _flatten(prefix: str, obj: Any, rows: list[tuple[str, Any]]) -> None:
    if isinstance(obj, Mapping):
        for k, v in obj.items():
            _flatten(f"{prefix}.{k}" if prefix else str(k), v, rows)
    else:
        rows.append((prefix, obj))


_CORNER_NAMES = {"mains_v": "mains", "freq_hz": "", "cap_f": "C", "r_ohm": "R", "vz_v": "Vz",
                 "load_a": "load", "bleeder_ohm": "bleeder"}  # fmt: skip


def _corner_text(corner: Any) -> str:
    """A corner for people: ``mains 253 V, 60 Hz, C 363 nF, R 423 Ω, Vz 12.6 V, load 0 A``."""
    if corner is None:
        return ""
    if isinstance(corner, Mapping):
        bits = []
        for k, v in corner.items():
            name = _CORNER_NAMES.get(str(k), _quantity_name(str(k)))
            bits.append(f"{name} {_show(str(k), v)}".strip())
        return ", ".join(bits)
    return str(corner)


def _corner_for(key: str, data: Mapping[str, Any], corners: Mapping[str, Any]) -> Any:
    """The corner of figure ``key``: ``corners[key]``, a sibling ``<key>_corner`` or
    ``<key without unit suffix>_corner`` (``max_zener_power_w`` -> ``max_zener_power_corner``),
    a sibling corner named by a word of the key (``rectifier_corner`` for
    ``max_rectifier_peak_current_a``), else the section's own ``corner``."""
    if key in corners:
        return corners[key]
    base = key
    for suffix, _ in UNIT_SUFFIXES:
        if key.endswith(suffix):
            base = key[: -len(suffix)]
            break
    for cand in (f"{key}_corner", f"{base}_corner"):
        if cand in data:
            return data[cand]
    words = base.split("_")
    for ck in data:
        if ck.endswith("_corner") and ck[: -len("_corner")] in words:
            return data[ck]
    return data.get("corner")


def _figure_rows(section: str, data: Mapping[str, Any]) -> list[dict[str, Any]]:
    """Rows (quantity, value cell, corner) of one section of computed figures.

    A corner is found as ``corners[name]`` / ``corner_of[name]``, a sibling ``<name>_corner``
    or, for a nested ``{"value": ..., "corner": ...}``, inside the value."""
    corners: Mapping[str, Any] = {}
    for ck in ("corners", "corner_of"):
        if isinstance(data.get(ck), Mapping):
            corners = data[ck]
    rows = []
    for k, v in data.items():
        if k in ("corners", "corner_of", "corner") or k.endswith("_corner"):
            continue
        path = f"{section}.{k}"
        corner = _corner_for(k, data, corners)
        if isinstance(v, Mapping) and "corner" in v and any(_is_number(x) for x in v.values()):
            corner = v.get("corner")
            for vk, vv in v.items():
                if vk != "corner" and (_is_number(vv) or vv is None):
                    rows.append(
                        {
                            "quantity": f"{_quantity_name(k)} ({_quantity_name(vk)})"
                            if vk not in ("value",)
                            else _quantity_name(k),
                            "cell": _Cell.of(vk if vk != "value" else k, vv, f"{path}.{vk}"),
                            "corner": _corner_text(corner),
                        }
                    )
            continue
        if isinstance(v, Mapping):
            sub = []
            _flatten(path, v, sub)
            for p, leaf in sub:
                if isinstance(leaf, (list, tuple)) and len(leaf) > 8:
                    continue
                rows.append(
                    {
                        "quantity": _quantity_name(p.split(".", 1)[1].replace(".", " / ")),
                        "cell": _Cell.of(p.rsplit(".", 1)[1], leaf, p),
                        "corner": "",
                    }
                )
            continue
        if isinstance(v, (list, tuple)) and len(v) > 8:
            continue  # arrays (waveforms) are plotted, not tabled
        rows.append(
            {
                "quantity": _quantity_name(k),
                "cell": _Cell.of(k, v, path),
                "corner": _corner_text(corner),
            }
        )
    return rows


def _input_rows(result: Mapping[str, Any]) -> list[dict[str, Any]]:
    rows = []
    for section in _INPUT_KEYS:
        data = result.get(section)
        if data is None:
            continue
        flat: list[tuple[str, Any]] = []
        if isinstance(data, list) and all(isinstance(d, Mapping) for d in data):
            for i, item in enumerate(data):
                _flatten(f"{section}[{i}]", item, flat)
        else:
            _flatten(section, data, flat)
        for path, leaf in flat:
            name = path.split(".", 1)[1] if "." in path else path
            rows.append(
                {
                    "section": section.replace("_", " "),
                    "quantity": _quantity_name(name.replace(".", " / ")),
                    "cell": _Cell.of(path.rsplit(".", 1)[-1], leaf, path),
                }
            )
    return rows


#: columns of a findings/parts row whose unit is named by the row's own ``unit`` field
_UNIT_FIELD_COLUMNS = frozenset({"stress", "rating", "limit", "value"})
_UNIT_FIELD_NAMES = {
    "V": "_v",
    "A": "_a",
    "W": "_w",
    "J": "_j",
    "s": "_s",
    "F": "_f",
    "ohm": "_ohm",
    "Hz": "_hz",
    "A2s": "_a2s",
    "C": "_c",
    "V/s": "_v_per_s",
}


#: unit of a part's ``value`` by its kind or role (as in the catalogue's VALUE_UNITS)
_ROLE_UNITS = {
    "x_capacitor": "F",
    "film_capacitor": "F",
    "electrolytic": "F",
    "reservoir": "F",
    "resistor": "ohm",
    "series_resistor": "ohm",
    "bleeder": "ohm",
    "zener": "V",
    "fuse": "A",
    "diode": "A",
    "bridge": "A",
    "rectifier": "A",
}


def _ok_of(item: Mapping[str, Any]) -> bool | None:
    """Pass/fail of a row: its ``ok`` field, else ``severity`` (fail = not ok)."""
    if isinstance(item.get("ok"), bool):
        return item["ok"]
    severity = item.get("severity")
    if isinstance(severity, str):
        return severity.lower() != "fail"
    return None


def _row_cell(item: Mapping[str, Any], column: str, path: str) -> _Cell:
    """One cell of a parts/findings row; the row's ``unit`` field gives the unit of its
    stress/rating/limit/value, else a part's ``value_unit``, kind or role gives its value's."""
    suffix = _UNIT_FIELD_NAMES.get(str(item.get("unit")), "")
    role_unit = item.get("value_unit") if item.get("value_unit") in _UNIT_FIELD_NAMES else None
    role_unit = role_unit or _ROLE_UNITS.get(str(item.get("kind") or item.get("role") or ""))
    unit_key = column + suffix if column in _UNIT_FIELD_COLUMNS else column
    if column == "value" and not suffix and role_unit:
        unit_key = "value" + _UNIT_FIELD_NAMES[role_unit]
    return _Cell.of(unit_key, item.get(column), f"{path}.{column}")


#: columns of the parts table; every other field of a part (family, package, area and the
#: ratings of its kind: ``rated_voltage_ac_v`` of a capacitor, ``vrrm_v`` of a rectifier, ...)
#: is a line of the row's details cell, so a table of mixed parts fits the page width
PART_COLUMNS = ("ref", "role", "code", "mpn", "description", "text", "value", "qty",
                "arrangement", "unit_price", "line_price")  # fmt: skip


def _table(
    items: Sequence[Any], prefix: str, columns_kept: Sequence[str] | None = None
) -> dict[str, Any]:
    """Column headers and cells of a list of flat dicts (parts, findings). A row's ``unit``
    field (``"V"``, ``"W"``, ...) gives the unit of its stress/rating/limit/value columns.

    ``columns_kept``: when given, only these fields are columns; the others are lines of one
    details cell per row (see :data:`PART_COLUMNS`)."""
    columns: list[str] = []
    for item in items:
        if isinstance(item, Mapping):
            for k, v in item.items():
                if k not in columns and not isinstance(v, (Mapping,)):
                    columns.append(k)
    # a column empty in every row says nothing; the unit column is folded into the numbers
    columns = [
        c
        for c in columns
        if c not in ("unit", "value_unit")
        and any(isinstance(it, Mapping) and it.get(c) not in (None, "", [], ()) for it in items)
    ]
    folded: list[str] = []
    if columns_kept is not None:
        folded = [c for c in columns if c not in columns_kept]
        columns = [c for c in columns if c in columns_kept]
    body = []
    for i, item in enumerate(items):
        item = item if isinstance(item, Mapping) else {"item": item}
        path = f"{prefix}[{i}]"
        details = [
            {"name": _quantity_name(c), "cell": _row_cell(item, c, path)}
            for c in folded
            if item.get(c) not in (None, "", [], ())
        ]
        body.append(
            {
                "ok": _ok_of(item),
                "severity": item.get("severity"),
                "cells": [_row_cell(item, c, path) for c in columns],
                "details": details,
            }
        )
    return {"columns": [_quantity_name(c) for c in columns], "rows": body, "folded": bool(folded)}


def _first_list(result: Mapping[str, Any], keys: Sequence[str]) -> tuple[str, list[Any]]:
    for k in keys:
        v = result.get(k)
        if isinstance(v, list):
            return k, v
    return "", []


def _collect_checks(result: Mapping[str, Any]) -> tuple[str, list[Any]]:
    key, items = _first_list(result, _CHECK_KEYS)
    if items:
        return key, items
    # audit: findings may sit inside each BOM line
    pkey, parts = _first_list(result, _PART_KEYS)
    nested = []
    for part in parts:
        if isinstance(part, Mapping):
            for ck in _CHECK_KEYS:
                for f in part.get(ck) or []:
                    if isinstance(f, Mapping):
                        nested.append({"part": part.get("ref", part.get("code", "")), **f})
    return (f"{pkey}[*].findings" if nested else ""), nested


def _plots(waveforms: Mapping[str, Any] | None) -> list[dict[str, str]]:
    """SVG figures from ``waveforms``: a mapping of plot title -> (unit, list of Trace or of
    ``(label, t_s, y)``)."""
    out = []
    for title, (unit, traces) in (waveforms or {}).items():
        trs = [tr if isinstance(tr, Trace) else Trace(*tr) for tr in traces]
        if trs:
            out.append({"title": str(title), "svg": waveform_svg(str(title), unit, trs)})
    return out


#: a word made of letter/digit runs joined by ``.`` or ``_`` (a name, a part code, a number)
_JOINED_WORD = re.compile(r"[A-Za-z0-9]+(?:[._][A-Za-z0-9]+)+")


def _wrap_word_joints(match: re.Match[str]) -> str:
    """The word of ``match`` (see :data:`_JOINED_WORD`) with ``<wbr>`` after each joint, except
    after a one-letter head (``x_capacitor``) and inside a number: a run of digits before the
    joint and a digit after it (``4.84``, ``1.2MV``, ``0805.100k``)."""
    pieces = re.split(r"([._])", match.group(0))
    out = [pieces[0]]
    for i in range(1, len(pieces), 2):
        head, joint, tail = pieces[i - 1], pieces[i], pieces[i + 1]
        number = head.isdigit() and tail[0].isdigit()
        one_letter_head = i == 1 and len(head) < 2
        out.append(joint + ("" if number or one_letter_head else "<wbr>") + tail)
    return "".join(out)


def _breakable(text: Any) -> markupsafe.Markup:
    """Escaped text with a line-break opportunity (``<wbr>``) after each ``.`` and ``_`` that
    joins two parts of a name or a part code (``series_r.surge_voltage``,
    ``res.fusible.0w5.8R2.5pct``), so it wraps at its joints in a narrow column instead of
    anywhere; not in numbers (``4.84``) and not after a one-letter head (``x_capacitor``).
    :attr:`_Cell.css` counts on these joints when it judges whether a word fits a column."""
    escaped = str(markupsafe.escape(text))
    return markupsafe.Markup(_JOINED_WORD.sub(_wrap_word_joints, escaped))


def _environment() -> jinja2.Environment:
    env = jinja2.Environment(
        loader=jinja2.PackageLoader("selector.report", "templates"),
        autoescape=jinja2.select_autoescape(["html", "j2"], default=True),
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.filters["breakable"] = _breakable
    return env


def render_report(
    kind: str,
    result: Mapping[str, Any],
    circuit: Any = None,
    *,
    waveforms: Mapping[str, Any] | None = None,
    labels: Mapping[str, str] | None = None,
    topology: str | None = None,
    title: str | None = None,
    analysis: Any = None,
    mains: Any = None,
    tolerances: Any = None,
    conditions: Any = None,
    now: Callable[[], _dt.datetime] | None = None,
) -> str:
    """The report as HTML text. See :func:`write_report` for the arguments."""
    if kind not in REPORT_KINDS:
        raise BadValueError(f"unknown report kind {kind!r}; one of {', '.join(REPORT_KINDS)}")
    if not isinstance(result, Mapping):
        raise BadValueError("the report needs the command's JSON document (a mapping)")
    # the exact document the command prints with --json, so the page and the JSON agree
    # (NaN / inf become null, as print_json writes them)
    doc = json.loads(json.dumps(_finite(result), default=_json_default, allow_nan=False))
    if circuit is not None and not any(k in doc for k in ("circuit", "requirement", "boards")):
        # a check document does not repeat its input: the report shows the analysed circuit
        # and the mains, tolerances and conditions it was analysed under, when given
        given = {"mains": mains, "tolerances": tolerances, "conditions": conditions}
        added = {k: _finite(_circuit_dict(v)) for k, v in given.items() if v is not None}
        doc = {"circuit": _finite(_circuit_dict(circuit)), **added, **doc}
    full = doc
    doc = _focus(doc)
    topo = topology or _find_topology(doc, circuit)
    schematic = ""
    if topo is not None:
        if labels is None:
            labels = _labels_from(doc) or (_labels_from_circuit(circuit) if circuit else {})
        schematic = schematic_svg(topo, labels)
    if waveforms is None and circuit is not None:
        from .figures import engine_waveforms

        if analysis is None and not doc.get("worst_case") and mains is not None:
            from ..engine import analyse

            analysis = analyse(circuit, mains, tolerances, conditions)
        waveforms = engine_waveforms(circuit, doc, analysis)
    figures = []
    for section in (*_FIGURE_KEYS, *[k for k in doc if k not in _FIGURE_KEYS]):
        data = doc.get(section)
        if section in _INPUT_KEYS or section in _SKIP_KEYS or not isinstance(data, Mapping):
            continue
        rows = _figure_rows(section, data)
        if any(r["cell"].si for r in rows):  # only sections with computed numbers
            shared = {r["corner"] for r in rows}
            corner = shared.pop() if len(shared) == 1 and len(rows) > 1 else ""
            if corner:  # one corner for the whole section: said once, above its table
                rows = [{**r, "corner": ""} for r in rows]
            figures.append(
                {
                    "section": section.replace("_", " "),
                    "rows": rows,
                    "corners": any(r["corner"] for r in rows),
                    "corner": corner,
                }
            )
    scalars = [
        {"quantity": _quantity_name(k), "cell": _Cell.of(k, v, k)}
        for k, v in doc.items()
        if not isinstance(v, (Mapping, list)) and k not in _SKIP_KEYS
    ]
    pkey, parts = _first_list(doc, _PART_KEYS)
    ckey, checks = _collect_checks(doc)
    failed = sum(1 for c in checks if isinstance(c, Mapping) and _ok_of(c) is False)
    cautions = doc.get("cautions") or list(CAUTIONS)
    stamp = (now or (lambda: _dt.datetime.now(_dt.UTC)))().strftime("%Y-%m-%d %H:%M UTC")
    html = (
        _environment()
        .get_template("report.html.j2")
        .render(
            kind=kind,
            title=title or _TITLES[kind],
            version=__version__,
            stamp=stamp,
            topology=topo,
            inputs=_input_rows(doc),
            scalars=scalars,
            schematic=schematic,
            figures=figures,
            plots=_plots(waveforms),
            parts=_table(parts, pkey, PART_COLUMNS) if parts else None,
            checks=_table(checks, ckey) if checks else None,
            failed=failed,
            n_checks=len(checks),
            verdict=doc.get("ok") if isinstance(doc.get("ok"), bool) else None,
            cautions=cautions,
            document=full,
            focus=_focus_path(full),
        )
    )
    return html


def write_report(
    path: str | os.PathLike[str],
    kind: str,
    result_dict: Mapping[str, Any],
    circuit: Any = None,
    *,
    waveforms: Mapping[str, Any] | None = None,
    labels: Mapping[str, str] | None = None,
    topology: str | None = None,
    title: str | None = None,
    analysis: Any = None,
    mains: Any = None,
    tolerances: Any = None,
    conditions: Any = None,
) -> Path:
    """Write one self-contained HTML report and return its path.

    ``kind``: ``"check"``, ``"design"`` or ``"audit"``. ``result_dict``: the JSON document the
    command prints with ``--json`` (SI numbers, unit-suffixed keys; a ``cautions`` list is
    shown, else :data:`selector.cautions.CAUTIONS`). ``circuit``: the analysed
    :class:`selector.engine.Circuit` (used for the topology and, when ``waveforms`` is not
    given, to compute the waveforms through ``selector.engine.waveforms`` if available).
    ``waveforms``: plot title -> ``(unit, traces)``, each trace a :class:`~.plots.Trace` or a
    ``(label, t_s, y)`` tuple; when omitted and ``circuit`` is given they are computed at the
    worst corners named in the document, else in ``analysis`` (an engine Analysis), else in a
    fresh ``selector.engine.analyse(circuit, mains, tolerances, conditions)`` when ``mains``
    is given (see :mod:`.figures`). ``labels``: schematic role -> label text (see
    :mod:`.schematic`); by default taken from the document. The file is written to a
    temporary name and renamed, so a failure leaves no half-written report.
    """
    html = render_report(
        kind,
        result_dict,
        circuit,
        waveforms=waveforms,
        labels=labels,
        topology=topology,
        title=title,
        analysis=analysis,
        mains=mains,
        tolerances=tolerances,
        conditions=conditions,
    )
    target = Path(path)
    fd, tmp = tempfile.mkstemp(dir=target.parent or ".", prefix=".dropper-", suffix=".html")
    mask = os.umask(0)
    os.umask(mask)
    os.chmod(tmp, 0o666 & ~mask)  # like any file the user writes, not mkstemp's 0600
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(html)
        os.replace(tmp, target)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)
    return target


def _json_default(obj: Any) -> Any:
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return dataclasses.asdict(obj)
    if hasattr(obj, "tolist"):
        return obj.tolist()
    if isinstance(obj, (set, frozenset)):
        return sorted(obj)
    raise TypeError(f"cannot put {type(obj).__name__} into the report")


def _finite(obj: Any) -> Any:
    """Like cli._app.to_jsonable: dataclasses and numpy to plain types, NaN/inf to None."""
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        obj = dataclasses.asdict(obj)
    if isinstance(obj, Mapping):
        return {str(k): _finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_finite(v) for v in obj]
    if hasattr(obj, "tolist"):
        return _finite(obj.tolist())
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    return obj


def _focus(doc: dict[str, Any]) -> dict[str, Any]:
    """A design document holding several ranked ``designs``: the first one, with the
    document's other keys (requirement, cautions, ...) kept beside it."""
    designs = doc.get("designs")
    if isinstance(designs, list) and designs and isinstance(designs[0], Mapping):
        merged = {k: v for k, v in doc.items() if k != "designs"}
        merged.update(designs[0])
        return merged
    return doc


def _focus_path(doc: Mapping[str, Any]) -> str:
    """Where the shown design sits in the JSON (``designs[0]``), or empty."""
    designs = doc.get("designs")
    return "designs[0]" if isinstance(designs, list) and designs else ""


def _find_topology(doc: Mapping[str, Any], circuit: Any) -> str | None:
    candidates = [getattr(circuit, "topology", None), doc.get("topology")]
    for section in _INPUT_KEYS:
        data = doc.get(section)
        if isinstance(data, list) and data and isinstance(data[0], Mapping):
            data = data[0]
        if isinstance(data, Mapping):
            candidates.append(data.get("topology"))
    for c in candidates:
        if isinstance(c, str) and c.strip().lower().replace("_", "-") in TOPOLOGIES:
            return c.strip().lower().replace("_", "-")
    return None


_ROLE_ALIASES = {
    "x_capacitor": ("x_capacitor", "x_cap", "capacitor", "dropper_capacitor"),
    "series_resistor": ("series_resistor", "series_r", "resistor"),
    "bleeder": ("bleeder", "bleeder_resistor"),
    "rectifier": ("rectifier", "bridge", "diode"),
    "zener": ("zener",),
    "reservoir": ("reservoir", "electrolytic"),
    "fuse": ("fuse",),
    "regulator": ("regulator",),
}


def _circuit_dict(circuit: Any) -> dict[str, Any]:
    if dataclasses.is_dataclass(circuit) and not isinstance(circuit, type):
        return dataclasses.asdict(circuit)
    if isinstance(circuit, Mapping):
        return dict(circuit)
    return {"description": str(circuit)}


def _labels_from_circuit(circuit: Any) -> dict[str, str]:
    """Schematic labels from an engine Circuit's values (a check has no part list)."""
    out: dict[str, str] = {}

    def put(role: str, ref: str, attr: str, unit: str) -> None:
        value = getattr(circuit, attr, None)
        if isinstance(value, (int, float)) and math.isfinite(value) and value > 0:
            out[role] = f"{ref} {format_value(float(value), unit, 3)}"

    put("x_capacitor", "C1", "x_capacitance_f", "F")
    put("series_resistor", "R1", "series_resistance_ohm", "ohm")
    put("bleeder", "R2", "bleeder_resistance_ohm", "ohm")
    put("zener", "DZ1", "zener_voltage_v", "V")
    put("reservoir", "C2", "reservoir_f", "F")
    load = getattr(circuit, "load", None)
    current = getattr(load, "current_a", None)
    if isinstance(current, (int, float)) and current > 0:
        out["load"] = f"load {format_value(float(current), 'A', 3)}"
    reg = getattr(circuit, "regulator", None)
    if reg is not None and getattr(reg, "output_v", None):
        out["regulator"] = f"U1 {format_value(float(reg.output_v), 'V', 3)}"
    return out


_DEFAULT_REFS = {"x_capacitor": "C1", "series_resistor": "R1", "bleeder": "R2",
                 "rectifier": "BR1", "zener": "DZ1", "reservoir": "C2", "fuse": "F1",
                 "regulator": "U1"}  # fmt: skip


def _short_label(target: str, part: Mapping[str, Any]) -> str:
    """``ref value rating`` for the schematic, e.g. ``C1 330 nF X2 305 V`` or ``R1 47 Ω 2 W x2``
    (the catalogue description would be too long to draw)."""
    bits = [str(part.get("ref") or part.get("designator") or _DEFAULT_REFS.get(target, ""))]
    value = part.get("value")
    unit = _ROLE_UNITS.get(target)
    if _is_number(value) and unit and target != "rectifier":
        bits.append(format_value(float(value), unit, 3))
    elif part.get("code"):
        bits.append(str(part["code"]).rsplit(":", 1)[-1])
    if target == "x_capacitor" and part.get("safety_class"):
        bits.append(str(part["safety_class"]))
    for key, u in (("rated_voltage_ac_v", "V"), ("power_w", "W")):
        if _is_number(part.get(key)):
            bits.append(format_value(float(part[key]), u, 3))
            break
    else:
        if target == "reservoir" and _is_number(part.get("rated_voltage_v")):
            bits.append(format_value(float(part["rated_voltage_v"]), "V", 3))
    qty = part.get("qty")
    if isinstance(qty, int) and qty > 1:
        bits.append(f"x{qty}")
    return " ".join(b for b in bits if b)


def _labels_from(doc: Mapping[str, Any]) -> dict[str, str]:
    """Schematic labels from the parts list (``role`` or ``kind`` per part)."""
    _, parts = _first_list(doc, _PART_KEYS)
    labels: dict[str, str] = {}
    for part in parts:
        if not isinstance(part, Mapping):
            continue
        role = str(part.get("role") or part.get("kind") or "")
        target = next((r for r, names in _ROLE_ALIASES.items() if role in names), None)
        if target is None or target in labels:
            continue
        labels[target] = _short_label(target, part) or target
    return labels

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

The report reads the JSON document generically: how one leaf is shown (units from the key's
suffix, fractions as percentages) is :mod:`.cells`; the rows of its tables are :mod:`.tables`.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import json
import math
import os
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import Any

import jinja2

from .. import __version__
from ..cautions import CAUTIONS
from ..errors import BadValueError
from ..units import format_value
from .cells import (
    FRACTION_WORDS,
    UNIT_SUFFIXES,
    _breakable,
    _Cell,
    _flatten,
    _is_number,
    _quantity_name,
)
from .plots import Trace, waveform_svg
from .schematic import TOPOLOGIES, schematic_svg
from .tables import _ROLE_UNITS, PART_COLUMNS, _figure_rows, _ok_of, _table

__all__ = ["FRACTION_WORDS", "REPORT_KINDS", "UNIT_SUFFIXES", "render_report", "write_report"]

REPORT_KINDS = ("check", "design", "audit")

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
    outputs: Any = None,
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
    temporary name and renamed, so a failure leaves no half-written report (the user's
    umask; :mod:`selector.outputs`). With ``outputs`` (an :class:`selector.outputs.Outputs`)
    the report is staged there and appears when the command's outputs are committed together.
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
    from ..outputs import write_atomic

    if outputs is not None:
        return outputs.write(path, html)
    return write_atomic(path, html)


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

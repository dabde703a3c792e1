"""Results: a verified candidate as a ``Design``, its JSON document, and its BOM (CSV)."""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any, Final

from .. import rules as R
from ..rules.life import life_record
from .requirement import Design, DesignPart, context_scalars
from .setup import SearchSetup
from .verify import catalogue_row, number_or

RATING_KEYS: Final[dict[str, tuple[str, ...]]] = {
    "x_capacitor": (
        "safety_class",
        "rated_voltage_ac_v",
        "dvdt_v_per_s",
        "impulse_v",
        "humidity_grade",
    ),
    "series_resistor": ("power_w", "limiting_voltage_v", "pulse_energy_j", "fusible"),
    "bleeder": ("power_w", "limiting_voltage_v"),
    "rectifier": ("vrrm_v", "if_av_a", "ifsm_a", "vf_v"),
    "zener": ("power_w", "tj_max_c", "zz_ohm"),
    "reservoir": ("rated_voltage_v", "ripple_a", "temp_max_c", "rated_life_h"),
    "fuse": ("i2t_a2s", "rated_voltage_ac_v"),
}


def design_part(setup, role, rows, arrangement) -> DesignPart:
    row = catalogue_row(setup, rows[0])
    qty = len(rows)
    price = number_or(row.get("unit_price"), 0.0)
    ratings = {}
    for k in RATING_KEYS[role]:
        v = row.get(k)
        if v is not None and not (isinstance(v, float) and math.isnan(v)):
            ratings[k] = v.item() if hasattr(v, "item") else v
    ratings["tolerance"] = number_or(row.get("tolerance"), float("nan"))
    return DesignPart(
        role=role,
        code=str(row["code"]),
        kind=str(row["kind"]),
        family=str(row.get("family", "")),
        description=str(row.get("description", "") or ""),
        value=float(row["value"]),
        qty=qty,
        arrangement=arrangement,
        unit_price=price,
        line_price=price * qty,
        area_mm2=number_or(row.get("area_mm2"), 0.0) * qty,
        mount=row.get("mount"),
        package=row.get("package"),
        price_note=row.get("price_note"),
        ratings=ratings,
        supplier=imported_supplier(row),
        rule_ratings=row_rule_ratings(row),
    )


def row_rule_ratings(row: Any) -> dict[str, Any]:
    """The catalogue row's figures that the rules and the engine read (the RatedPart the
    verification built comes from the same row: ``rules.rated_part_from_row``)."""
    from ..audit.ratings import STATED_FIELDS

    out: dict[str, Any] = {}
    for name in STATED_FIELDS:
        figure = row.get(name)
        if figure is None or (isinstance(figure, float) and math.isnan(figure)):
            continue
        out[name] = figure.item() if hasattr(figure, "item") else figure
    return out


def imported_supplier(row: Any) -> str | None:
    """The supplier of a part from an imported list (built-in rows have none)."""
    source = str(row.get("source", "") or "")
    supplier = row.get("supplier")
    if not source.startswith("import:") or supplier is None:
        return None
    if isinstance(supplier, float) and math.isnan(supplier):
        return None
    return str(supplier)


def to_design(setup: SearchSetup, rank: int, res) -> Design:
    key, sel, an, findings, circ, rparts = res
    topology, vz, xi, ri, zi, di, ci, bi, fi = sel
    parts: list[DesignPart] = []
    xrows = setup.xo.rows[xi]
    if len(xrows) == 2 and xrows[0] != xrows[1]:
        parts += [design_part(setup, "x_capacitor", (r,), "parallel") for r in xrows]
    else:
        parts.append(
            design_part(setup, "x_capacitor", xrows, "parallel" if len(xrows) > 1 else "single")
        )
    srows = setup.ro.rows[ri]
    if len(srows) == 2 and srows[0] != srows[1]:
        parts += [design_part(setup, "series_resistor", (r,), "series") for r in srows]
    else:
        parts.append(design_part(setup, "series_resistor", srows, setup.ro.arrangement[ri]))
    for role, opts, i in (
        ("bleeder", setup.bo, bi),
        ("rectifier", setup.rect[topology], di),
        ("zener", setup.zo[(topology, vz)], zi),
        ("reservoir", setup.co, ci),
    ):
        arr = opts.arrangement[i]
        parts.append(design_part(setup, role, opts.rows[i], arr))
    if fi is not None:
        parts.append(design_part(setup, "fuse", setup.fo.rows[fi], "single"))
    total_price = float(sum(p.line_price for p in parts))
    total_area = float(sum(p.area_mm2 for p in parts))
    count = int(sum(p.qty for p in parts))
    binding = binding_rules(findings)
    zopt = setup.zo[(topology, vz)]
    zrow = catalogue_row(setup, zopt.rows[zi][0])
    effective = {
        "x_capacitance_f": float(circ.x_capacitance_f),
        "series_resistance_ohm": float(circ.series_resistance_ohm),
        "bleeder_resistance_ohm": float(circ.bleeder_resistance_ohm),
        "zener_voltage_v": float(circ.zener_voltage_v),
        "zener_power_rating_w": number_or(zrow.get("power_w"), float("nan")) * zopt.qty[zi],
        "reservoir_f": float(circ.reservoir_f),
    }
    rp = {k: (v if isinstance(v, list) else [v]) for k, v in rparts.items()}
    stresses, _ = R.stresses_from_analysis(an, context_scalars(setup.req))
    life = life_record(stresses, rparts)
    return Design(
        rank=rank,
        topology=topology,
        total_price=total_price,
        total_area_mm2=total_area,
        part_count=count,
        parts=parts,
        effective=effective,
        worst_case=getattr(an, "worst_case", None),
        analysis=an,
        checks=findings,
        binding=binding,
        circuit=circ,
        rated_parts=rp,
        life=life,
    )


def binding_rules(findings: Sequence[R.Finding], n: int = 3) -> list[str]:
    """The rules with the smallest margins (the ones that decide the design)."""
    ms = [f for f in findings if f.margin is not None and f.unit != "class"]
    ms.sort(key=lambda f: f.margin)
    return [f.rule for f in ms[:n]]


def design_to_dict(d: Design) -> dict[str, Any]:
    """The JSON shape of one design (issue 4): SI numbers, snake_case keys with unit suffixes."""
    return {
        "rank": d.rank,
        "topology": d.topology,
        "total_price": d.total_price,
        "total_area_mm2": d.total_area_mm2,
        "part_count": d.part_count,
        "price_note": next((p.price_note for p in d.parts if p.price_note), None),
        "parts": [
            {
                "role": p.role,
                "code": p.code,
                "family": p.family,
                "description": p.description,
                "value": p.value,
                "qty": p.qty,
                "arrangement": p.arrangement,
                "unit_price": p.unit_price,
                "line_price": p.line_price,
                "area_mm2": p.area_mm2,
                "mount": p.mount,
                "package": p.package,
                "supplier": p.supplier,
                **{k: v for k, v in p.ratings.items()},
            }
            for p in d.parts
        ],
        "effective": d.effective,
        "worst_case": d.worst_case,
        "life": d.life,
        "binding": d.binding,
        # wall-clock seconds stay out of the document, so that the same request prints the same
        "search": {k: v for k, v in d.search.items() if k != "seconds"},
        "checks": [
            {
                "rule": f.rule,
                "part": f.part,
                "stress": f.stress,
                "limit": f.limit,
                "unit": f.unit,
                "margin": f.margin,
                "ok": f.ok,
                "severity": f.severity,
                "source": f.source,
                "corner": f.corner,
                "note": f.note,
            }
            for f in d.checks
        ],
    }


REF_PREFIX: Final[dict[str, str]] = {
    "x_capacitor": "C",
    "series_resistor": "R",
    "bleeder": "R",
    "rectifier": "D",
    "zener": "D",
    "reservoir": "C",
    "fuse": "F",
}


def bom_cell(text: Any) -> str:
    """A CSV cell a spreadsheet will not run as a formula: :func:`selector.outputs.spreadsheet_cell`
    (leading = + - @ tab CR get an apostrophe; plain numbers stay as they are)."""
    from ..outputs import spreadsheet_cell

    return spreadsheet_cell(text)


#: the columns of a design's BOM, in order
BOM_COLUMNS: Final[tuple[str, ...]] = (
    "Reference",
    "Value",
    "Qty",
    "Description",
    "Footprint",
    "Role",
    "Catalogue code",
    "Supplier",
    "Ratings",
    "Price note",
)


def rule_ratings_text(ratings: dict[str, Any]) -> str:
    """A part's rule ratings (:attr:`DesignPart.rule_ratings`) as a BOM's ``Ratings`` cell:
    ``name=number; ...`` with plain SI numbers (12 significant digits, as
    :func:`selector.units.parse_value` reads them back); ``fusible`` only when true.

    >>> rule_ratings_text({"power_w": 0.5, "limiting_voltage_v": 250.0, "fusible": True})
    'power_w=0.5; limiting_voltage_v=250; fusible=1'
    """
    cells = []
    for name, figure in ratings.items():
        if isinstance(figure, bool) or name == "fusible":
            if not figure:
                continue
            text = "1"
        elif isinstance(figure, (int, float)):
            text = f"{float(figure):.12g}"
        else:
            text = str(figure)
        cells.append(f"{name}={text}")
    return "; ".join(cells)


def bom_rows(d: Design) -> list[dict[str, str]]:
    """BOM lines of a design (:data:`BOM_COLUMNS`).

    Descriptions are the catalogue's, which carry the ratings in text (class, voltage, power,
    limiting voltage); the ``Ratings`` column carries every rating the design's rules read
    (:func:`rule_ratings_text`), the catalogue code and the supplier of an imported part come
    with it, so that `dropper audit` of this BOM evaluates the parts the design evaluated.
    """
    from ..units import format_value

    unit = {
        "x_capacitor": "F",
        "reservoir": "F",
        "series_resistor": "ohm",
        "bleeder": "ohm",
        "zener": "V",
        "fuse": "A",
        "rectifier": "A",
    }
    counters: dict[str, int] = {}
    rows = []
    for p in d.parts:
        prefix = "BR" if p.kind == "bridge" else REF_PREFIX[p.role]
        refs = []
        for _ in range(p.qty):
            counters[prefix] = counters.get(prefix, 0) + 1
            refs.append(f"{prefix}{counters[prefix]}")
        value = format_value(p.value, unit[p.role], ascii=True)
        if p.role == "rectifier":
            value = p.code
        rows.append(
            {
                "Reference": ", ".join(refs),
                "Value": value,
                "Qty": str(p.qty),
                "Description": p.description,
                "Footprint": p.package or "",
                "Role": p.role,
                "Catalogue code": p.code,
                "Supplier": p.supplier or "",
                "Ratings": rule_ratings_text(p.rule_ratings),
                "Price note": p.price_note or "",
            }
        )
    return rows


def bom_csv(d: Design) -> str:
    """The BOM of ``d`` as CSV text (lines end in CRLF, the csv module's default), every cell
    passed through :func:`bom_cell`."""
    import csv
    import io

    cols = list(BOM_COLUMNS)
    buf = io.StringIO(newline="")
    w = csv.writer(buf)
    w.writerow(cols)
    for r in bom_rows(d):
        w.writerow([bom_cell(r[c]) for c in cols])
    return buf.getvalue()


def write_bom(d: Design, path: str | Any, outputs: Any = None) -> None:
    """Write the BOM of ``d`` as CSV atomically (temporary file, then rename; the user's
    umask). With ``outputs`` (a :class:`selector.outputs.Outputs`) the file is staged there
    and appears when the command's outputs are committed together."""
    from ..outputs import write_atomic

    if outputs is not None:
        outputs.write(path, bom_csv(d), newline="")
    else:
        write_atomic(path, bom_csv(d), newline="")

"""Schematics of the two dropper topologies with the chosen values, drawn with schemdraw.

The drawing comes back as SVG text (schemdraw's own SVG backend) ready to sit inline in an HTML
report. The layout is this project's own.

Roles (keys of ``labels``): ``fuse``, ``series_resistor``, ``x_capacitor``, ``bleeder``,
``rectifier`` (the bridge, or the series diode of the half-wave circuit), ``zener``,
``reservoir``, ``regulator`` (optional linear post-regulator) and ``load``. Each value is the
text printed beside that part (designator, value and rating, e.g. ``"C1 330 nF X2 305 V"``).
A missing role is drawn with its designator only, except ``fuse`` and ``regulator``, which are
left out when absent.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

import schemdraw
import schemdraw.elements as elm

from ..errors import BadValueError

__all__ = ["ROLES", "TOPOLOGIES", "schematic_svg"]

TOPOLOGIES = ("bridge", "half-wave")

_DESIGNATORS = {
    "fuse": "F1",
    "series_resistor": "R1",
    "x_capacitor": "C1",
    "bleeder": "R2",
    "rectifier": "BR1",
    "zener": "DZ1",
    "reservoir": "C2",
    "regulator": "U1",
    "load": "load",
}
ROLES = tuple(_DESIGNATORS)


def _text(labels: Mapping[str, str], role: str, topology: str) -> str:
    text = labels.get(role)
    if text:
        return str(text)
    if role == "rectifier" and topology == "half-wave":
        return "D1"
    return _DESIGNATORS[role]


def _draw(d: schemdraw.Drawing, topology: str, labels: Mapping[str, str]) -> None:
    def t(role: str) -> str:
        return _text(labels, role, topology)

    # mains, fuse, series resistor, X capacitor with the bleeder across it
    src = d.add(elm.SourceSin().up().label("mains", loc="left", ofst=0.3))
    d.add(elm.Line().at(src.end).up(2.0))
    d.add(elm.Dot(open=True).label("L", loc="left"))
    d.add(elm.Line().right(0.5))
    if labels.get("fuse"):
        d.add(elm.Fuse().right().label(t("fuse")))
    d.add(elm.Resistor().right().label(t("series_resistor")))
    d.add(elm.Line().right(0.5))
    left = d.add(elm.Dot())
    cap = d.add(elm.Capacitor().right().label(t("x_capacitor"), loc="bottom"))
    right = d.add(elm.Dot())
    d.add(elm.Line().at(left.center).up(1.5))
    d.add(elm.Resistor().right().tox(right.center).label(t("bleeder")))
    d.add(elm.Line().down().toy(right.center))
    d.add(elm.Dot(open=True).at(src.start).label("N", loc="left"))

    if topology == "bridge":
        # a diamond of four diodes: AC at the top and bottom corners, DC+ right, DC- left
        d.add(elm.Line().at(cap.end).right(1.5))
        top = d.here
        side = 1.6
        rgt = (top[0] + side, top[1] - side)
        bot = (top[0], top[1] - 2 * side)
        lft = (top[0] - side, top[1] - side)
        d.add(elm.Diode().at(top).to(rgt))
        d.add(elm.Diode().at(bot).to(rgt))
        d.add(elm.Diode().at(lft).to(top))
        d.add(elm.Diode().at(lft).to(bot))
        d.add(elm.Label().at(rgt).label(t("rectifier"), loc="right", ofst=(0.3, 1.2)))
        # neutral runs to the lower AC corner; DC- drops below it to the return rail
        d.add(elm.Line().at(src.start).right().tox(bot))
        d.add(elm.Line().up().toy(bot))
        rail_y = src.start[1] - 1.5
        d.add(elm.Line().at(lft).down().toy(rail_y))
        rail_start = d.here
        d.add(elm.Line().at(rgt).right(1.0))
        zener_here = True
    else:
        d.add(elm.Line().at(cap.end).right(1.0))
        za = d.add(elm.Dot().label("A", loc="top"))
        rail_y = src.start[1]
        d.add(elm.Zener().down().reverse().toy(rail_y).label(t("zener")))
        d.add(elm.Line().at(src.start).right().tox(za.center))
        rail_start = src.start
        d.add(elm.Line().at(za.center).right(0.5))
        d.add(elm.Diode().right().label(t("rectifier")))
        zener_here = False

    # DC bus: reservoir, Zener clamp (bridge), optional regulator, load
    d.add(elm.Line().right(0.75))
    n1 = d.add(elm.Dot())
    d.add(elm.Capacitor(polar=True).down().toy(rail_y).label(t("reservoir"), loc="bottom"))
    d.add(elm.Line().at(n1.center).right(5.0))
    if zener_here:
        n2 = d.add(elm.Dot())
        d.add(elm.Zener().down().reverse().toy(rail_y).label(t("zener"), loc="bottom"))
        d.add(elm.Line().at(n2.center).right(5.0))
    if labels.get("regulator"):
        d.add(elm.RBox().right().label(t("regulator")))
        d.add(elm.Line().right(0.5))
    out = d.add(elm.Dot(open=True).label("+out", loc="top"))
    d.add(elm.Line().at(out.center).right(1.0))
    load = d.add(elm.RBox().down().toy(rail_y).label(t("load"), loc="bottom"))
    # room for the load's label on the right: the drawing's box does not count label text
    d.add(elm.Gap().at(load.center).right(0.6 + 0.16 * len(t("load"))))
    d.add(elm.Line().at(load.end).left().tox(rail_start))
    d.add(elm.Dot(open=True).at(load.end).label("0 V", loc="bottom"))


def schematic_svg(topology: str, labels: Mapping[str, str] | None = None) -> str:
    """Draw ``topology`` (``"bridge"`` or ``"half-wave"``) with the given part labels and return
    the drawing as SVG text without the XML declaration (so it can sit inline in HTML).

    >>> svg = schematic_svg("half-wave", {"x_capacitor": "C1 330 nF"})
    >>> svg.startswith("<svg") and "330 nF" in svg
    True
    """
    key = str(topology).strip().lower().replace("_", "-")
    if key not in TOPOLOGIES:
        raise BadValueError(f"unknown topology {topology!r}; one of {', '.join(TOPOLOGIES)}")
    with schemdraw.Drawing(canvas="svg", show=False, fontsize=11) as d:
        _draw(d, key, dict(labels or {}))
        svg = d.get_imagedata("svg").decode("utf-8")
    return re.sub(r"^<\?xml[^>]*>\s*", "", svg)

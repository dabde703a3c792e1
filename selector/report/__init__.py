"""Self-contained HTML reports for ``check``, ``design`` and ``audit``.

One file per report: jinja2 (autoescaped) HTML with inline CSS, the schematic (schemdraw) and
the waveform plots (matplotlib) as inline SVG, the command's JSON document embedded verbatim,
and no reference to anything on the network.
"""

from __future__ import annotations

from .html import REPORT_KINDS, render_report, write_report

__all__ = ["REPORT_KINDS", "render_report", "write_report"]

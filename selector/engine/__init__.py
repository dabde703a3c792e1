"""The worst-case circuit engine: circuit description, periodic steady state, transients, corners.

Public surface (SI floats throughout)::

    from selector.engine import Circuit, Load, Mains, Tolerances, Conditions, analyse
    a = analyse(Circuit(...), Mains(230, 0.1, (50, 60)), Tolerances(), Conditions())
    a.nominal.dc_current_a, a.worst_case.max_zener_power_w, a.worst_case.max_zener_power_corner

``selector.engine.closed_form`` holds the numpy-broadcasting closed forms (the design screen).
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING

# Names are loaded on first use (PEP 562), so `import selector.engine.circuit` - all the CLI needs
# to declare its options - does not pull numpy into `dropper --help`.
_WHERE = {
    "closed_form": None,
    "surge_circuit": None,
    "Analysis": "analysis",
    "Corner": "analysis",
    "Nominal": "analysis",
    "WorstCase": "analysis",
    "analyse": "analysis",
    "corner_circuit": "analysis",
    "corners": "analysis",
    "surge_through_circuit": "analysis",
    "DISCHARGE_PROFILES": "circuit",
    "TOPOLOGIES": "circuit",
    "Circuit": "circuit",
    "Conditions": "circuit",
    "Load": "circuit",
    "Mains": "circuit",
    "Regulator": "circuit",
    "Tolerances": "circuit",
    "SteadyState": "steady_state",
    "solve_steady_state": "steady_state",
    "DISCHARGE_RULES": "transients",
    "Discharge": "transients",
    "Holdup": "transients",
    "Inrush": "transients",
    "Startup": "transients",
    "Surge": "transients",
    "discharge": "transients",
    "holdup": "transients",
    "inrush": "transients",
    "startup": "transients",
    "surge": "transients",
    "surge_wave": "transients",
    "switch_on_waveform": "waveforms",
    "waveforms": "waveforms",
}


def __getattr__(name: str):
    if name not in _WHERE:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    where = _WHERE[name] or name
    module = import_module(f".{where}", __name__)
    if _WHERE[name] is None:
        globals()[name] = module
        return module
    # bind every name of that module now: importing `.waveforms` also binds the package
    # attribute `waveforms` to the module, which must not shadow the function of that name
    for other, home in _WHERE.items():
        if home == where:
            globals()[other] = getattr(module, other)
    return globals()[name]


if TYPE_CHECKING:  # pragma: no cover
    from . import closed_form, surge_circuit
    from .analysis import (
        Analysis,
        Corner,
        Nominal,
        WorstCase,
        analyse,
        corner_circuit,
        corners,
        surge_through_circuit,
    )
    from .circuit import (
        DISCHARGE_PROFILES,
        TOPOLOGIES,
        Circuit,
        Conditions,
        Load,
        Mains,
        Regulator,
        Tolerances,
    )
    from .steady_state import SteadyState, solve_steady_state
    from .transients import (
        DISCHARGE_RULES,
        Discharge,
        Holdup,
        Inrush,
        Startup,
        Surge,
        discharge,
        holdup,
        inrush,
        startup,
        surge,
        surge_wave,
    )
    from .waveforms import switch_on_waveform, waveforms

__all__ = [
    "DISCHARGE_PROFILES",
    "DISCHARGE_RULES",
    "TOPOLOGIES",
    "Analysis",
    "Circuit",
    "Conditions",
    "Corner",
    "Discharge",
    "Holdup",
    "Inrush",
    "Load",
    "Mains",
    "Nominal",
    "Regulator",
    "Startup",
    "SteadyState",
    "Surge",
    "Tolerances",
    "WorstCase",
    "analyse",
    "closed_form",
    "corner_circuit",
    "corners",
    "discharge",
    "holdup",
    "inrush",
    "solve_steady_state",
    "startup",
    "surge",
    "surge_circuit",
    "surge_through_circuit",
    "surge_wave",
    "switch_on_waveform",
    "waveforms",
]

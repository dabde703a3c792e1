"""Results of the engine's two costly solvers kept per process, keyed by what they depend on.

The design search asks the engine about many circuits that share pieces: the quick minimum
current (``analysis.min_dc_current``) solves the very corner that the full analysis of the same
circuit solves again, the quick surge bounds simulate a subset of the corners that the full
analysis simulates, and the explanation of an infeasible request re-runs the search with a
relaxed load (the surge does not read the load). Two caches keep such results:

- :func:`steady_state`: ``steady_state.solve_steady_state`` of one (corner circuit, mains
  voltage, frequency, harmonics, load override). The key is every argument the solver reads
  (``Circuit`` is a frozen dataclass compared field by field), so a hit returns the very
  object the solver returned for those arguments: bit for bit the same figures. Only calls
  without a kept trace are cached (the trace is large and only the reports read it).
- :class:`SurgeCaseCache`: the runs (phases x polarities) of one ``SurgeCase`` at one surge
  level. A case holds every number the surge simulation reads for it (topology, corner values,
  diode and Zener lines, reservoir and ESR, pre-state at each phase, varistor; the load is off
  in every case), so its runs do not depend on which other cases were simulated with it up to
  the rounding of the batched products (measured below 1e-10 relative,
  tests/test_engine_reuse.py).

Both are bounded (least recently used entries are dropped first) and can be emptied with
:func:`clear`; ``stats`` counts hits and misses for the benchmarks.
"""

from __future__ import annotations

from collections import OrderedDict
from collections.abc import Hashable
from typing import Any, Final

import numpy as np

__all__ = ["SURGE_CASES", "SurgeCaseCache", "clear", "stats", "steady_state"]

#: most steady states kept (each a few hundred bytes)
STEADY_STATE_ENTRIES: Final[int] = 20_000
#: most surge cases kept (each 8 runs x ~20 figures of 8 bytes)
SURGE_CASE_ENTRIES: Final[int] = 20_000

stats: dict[str, int] = {"steady_hits": 0, "steady_misses": 0, "surge_hits": 0, "surge_misses": 0}

_steady: OrderedDict[Hashable, Any] = OrderedDict()


def steady_state(circuit, mains_v: float, freq_hz: float, harmonics: tuple = (), **load: float):
    """``solve_steady_state(circuit, mains_v, freq_hz, harmonics=harmonics, **load)`` (no trace),
    solved once per distinct argument set (see the module docstring)."""
    from .steady_state import solve_steady_state

    key = (circuit, float(mains_v), float(freq_hz), tuple(harmonics), tuple(sorted(load.items())))
    hit = _steady.get(key)
    if hit is not None:
        _steady.move_to_end(key)
        stats["steady_hits"] += 1
        return hit
    stats["steady_misses"] += 1
    st = solve_steady_state(circuit, mains_v, freq_hz, harmonics=tuple(harmonics), **load)
    _steady[key] = st
    if len(_steady) > STEADY_STATE_ENTRIES:
        _steady.popitem(last=False)
    return st


class SurgeCaseCache:
    """The runs of each (``SurgeCase``, level) as one array (runs x figures), in the order in
    which ``surge_simulation.simulate`` returns them (phase-major, then polarity +1, -1)."""

    def __init__(self, entries: int = SURGE_CASE_ENTRIES) -> None:
        self.entries = entries
        self._runs: OrderedDict[Hashable, np.ndarray] = OrderedDict()

    def get(self, case, level_v: float) -> np.ndarray | None:
        key = (case, float(level_v))
        hit = self._runs.get(key)
        if hit is not None:
            self._runs.move_to_end(key)
            stats["surge_hits"] += 1
        return hit

    def put(self, case, level_v: float, runs: np.ndarray) -> None:
        stats["surge_misses"] += 1
        runs.setflags(write=False)
        self._runs[(case, float(level_v))] = runs
        if len(self._runs) > self.entries:
            self._runs.popitem(last=False)

    def clear(self) -> None:
        self._runs.clear()


#: the process's surge-case cache (used by ``surge_circuit.worst_surge_many``)
SURGE_CASES = SurgeCaseCache()


def clear() -> None:
    """Empty both caches and zero the counters."""
    _steady.clear()
    SURGE_CASES.clear()
    for k in stats:
        stats[k] = 0

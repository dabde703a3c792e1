"""IEC 60063 preferred series and snapping (selector.eseries).

Outside references: the `eseries` package (PyPI, MIT), an independent implementation of the
IEC 60063 tables; IEC 60063:2015 itself for the irregular values [S].
"""

from __future__ import annotations

import math

import eseries as reference
import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from selector import eseries
from selector.errors import BadValueError

_REF = {
    "E3": reference.E3,
    "E6": reference.E6,
    "E12": reference.E12,
    "E24": reference.E24,
    "E48": reference.E48,
    "E96": reference.E96,
    "E192": reference.E192,
}


@pytest.mark.parametrize("name", list(_REF))
def test_tables_equal_the_eseries_package(name):
    # source: `eseries` package, series() returns the integer mantissas of IEC 60063
    assert eseries.SERIES[name] == tuple(reference.series(_REF[name]))


@pytest.mark.parametrize("name", list(_REF))
def test_tolerances_equal_the_eseries_package(name):
    if name == "E3":
        pytest.skip("IEC 60063 gives E3 no tolerance; the eseries package uses 40 %, as we do")
    assert eseries.SERIES_TOLERANCE[name] == pytest.approx(reference.tolerance(_REF[name]))


def test_counts_and_irregular_values():
    # IEC 60063:2015: each En series has n values per decade [S]
    for name, values in eseries.SERIES.items():
        assert len(values) == int(name[1:])
    # values where IEC 60063 departs from round(10**(i/24)) [S] (DOMAIN.md table 5)
    for v in (27, 30, 33, 36, 39, 43, 47, 82):
        i = eseries.SERIES["E24"].index(v)
        assert round(10 ** (i / 24) * 10) != v
    assert 920 in eseries.SERIES["E192"] and 919 not in eseries.SERIES["E192"]


def test_worked_examples():
    # common practice, no source: 70.1 nF -> 68 nF and 4.42 k -> 4.7 k in E12
    assert eseries.nearest(70.1e-9, "E12") == pytest.approx(68e-9)
    assert eseries.nearest(4.42e3, "E12") == pytest.approx(4.7e3)
    assert eseries.up(0.33e-6, "E6") == pytest.approx(0.33e-6)
    assert eseries.down(70.1e-9, "E12") == pytest.approx(68e-9)
    assert eseries.up(70.1e-9, "E12") == pytest.approx(82e-9)


@pytest.mark.parametrize("name", ["E6", "E12", "E24", "E96"])
@pytest.mark.parametrize("target", [1.04e-9, 70.1e-9, 4.42e3, 997.0, 1.5e6])
def test_agrees_with_eseries_find_functions(name, target):
    # source: eseries.find_nearest / find_greater_than_or_equal / find_less_than_or_equal
    series = _REF[name]
    assert eseries.up(target, name) == pytest.approx(
        reference.find_greater_than_or_equal(series, target), rel=1e-12
    )
    assert eseries.down(target, name) == pytest.approx(
        reference.find_less_than_or_equal(series, target), rel=1e-12
    )


def test_values_on_the_series_map_to_themselves():
    values = np.array([4.7e-9, 6.8e-8, 1e-12, 4.7e3, 2.2e6, 1.0])
    for fn in (eseries.nearest, eseries.up, eseries.down):
        assert np.allclose(fn(values, "E12"), values, rtol=1e-12)


def test_vectorised_equals_scalar():
    rng = np.random.default_rng(1)
    values = 10 ** rng.uniform(-12, 9, 500)
    vec = eseries.nearest(values, "E24")
    assert all(vec[i] == eseries.nearest(float(values[i]), "E24") for i in range(len(values)))


def test_values_in_range():
    assert eseries.values_in_range(1e3, 1e4, "E6").tolist() == pytest.approx(
        [1e3, 1.5e3, 2.2e3, 3.3e3, 4.7e3, 6.8e3, 1e4]
    )
    # reference: eseries.erange is the same closed range
    ref = list(reference.erange(reference.E12, 10e-9, 1e-6))
    assert eseries.values_in_range(10e-9, 1e-6, "E12") == pytest.approx(ref)


def test_covering():
    # a 10 % part marked 120 is at least 108 > 100; 100 itself could be 90
    assert eseries.covering(100.0, "E12", 0.10, "up") == pytest.approx(120.0)
    assert eseries.covering(100.0, "E12", 0.10, "down") == pytest.approx(82.0)
    # default tolerance is the series' own (E24 -> 5 %)
    assert eseries.covering(100.0, "E24") == pytest.approx(110.0)


@pytest.mark.parametrize(
    ("call", "fragment"),
    [
        (lambda: eseries.nearest(1.0, "E7"), "E3, E6, E12"),
        (lambda: eseries.nearest(-1.0, "E12"), "positive"),
        (lambda: eseries.snap(1.0, "E12", "sideways"), "nearest, up, down"),
        (lambda: eseries.values_in_range(2.0, 1.0), "low <= high"),
        (lambda: eseries.covering(1.0, "E12", 1.5), "fraction"),
    ],
)
def test_errors_name_the_alternatives(call, fragment):
    with pytest.raises(BadValueError, match=fragment):
        call()


_TARGETS = st.floats(min_value=1e-12, max_value=1e9, allow_nan=False, allow_infinity=False)
_NAMES = st.sampled_from(list(_REF))


@given(_TARGETS, _NAMES)
def test_up_is_at_least_the_target(target, name):
    assert eseries.up(target, name) >= target * (1 - 1e-9)


@given(_TARGETS, _NAMES)
def test_down_is_at_most_the_target(target, name):
    assert eseries.down(target, name) <= target * (1 + 1e-9)


@given(_TARGETS, _NAMES)
def test_nearest_is_nearest_on_a_log_scale(target, name):
    chosen = eseries.nearest(target, name)
    decade = math.floor(math.log10(target))
    candidates = eseries.values_in_range(10 ** (decade - 1), 10 ** (decade + 2), name)
    best = min(abs(math.log(c / target)) for c in candidates)
    assert abs(math.log(chosen / target)) <= best + 1e-9


@given(_TARGETS, _NAMES)
def test_up_and_down_are_neighbours(target, name):
    u, d = eseries.up(target, name), eseries.down(target, name)
    between = eseries.values_in_range(d * (1 + 1e-6), u * (1 - 1e-6), name) if u > d else []
    assert len(between) == 0

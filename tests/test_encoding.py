"""Station arrays written straight from numpy give the bytes msgspec writes for the lists.

The reference is msgspec's own JSON and MessagePack encoders applied to the Python lists
of the ``"list"`` result; array lengths cover every MessagePack array header (fixarray up
to 15 entries, array 16 up to 65,535, array 32 beyond).  Whole results are compared in
``tests/test_properties.py`` on random cases, and results that carry some of the arrays
(``output.stations``) here.
"""

from __future__ import annotations

import math

import msgspec
import numpy as np
import pytest

import ibl
from ibl.analysis import _Json, _Lists, _Msgpack
from ibl.bench import ellipse_case
from ibl.schema import STATION_QUANTITIES

LENGTHS = [0, 1, 15, 16, 17, 65_535, 65_536]


def _values(n: int) -> np.ndarray:
    rng = np.random.default_rng(n)
    values = rng.standard_normal(n) * 10.0 ** rng.integers(-12, 12, n)
    values[::5] = 0.0
    values[1::7] = -0.0
    return values


def _with_none(values: np.ndarray) -> list[float | None]:
    return [None if math.isnan(v) else v for v in values.tolist()]


@pytest.mark.parametrize("n", LENGTHS)
@pytest.mark.parametrize(
    ("fragments", "module"), [(_Json, msgspec.json), (_Msgpack, msgspec.msgpack)]
)
def test_fragments_equal_the_encoded_lists(n: int, fragments: type, module) -> None:
    values = _values(n)
    assert bytes(fragments.rows([values])[0]) == module.encode(values.tolist())
    gappy = values.copy()
    gappy[::3] = np.nan
    assert bytes(fragments.nullable(gappy)) == module.encode(_with_none(gappy))
    regime = ["laminar"] * (n // 3) + ["turbulent"] * (n - n // 3)
    assert bytes(fragments.regime(n // 3, n - n // 3)) == module.encode(regime)


def test_fragments_take_strided_arrays() -> None:
    values = _values(40)[::2]
    assert bytes(_Json.rows([values])[0]) == msgspec.json.encode(values.tolist())
    assert bytes(_Msgpack.rows([values])[0]) == msgspec.msgpack.encode(values.tolist())


@pytest.mark.parametrize("n", [0, 1, 16, 300])
@pytest.mark.parametrize("fragments", [_Lists, _Json, _Msgpack])
@pytest.mark.parametrize("block", [False, True], ids=["list", "block"])
def test_rows_equal_each_row_on_its_own(n: int, fragments: type, block: bool) -> None:
    # Rows given as a list of arrays, or as the rows of one 2-D array.
    columns = [_values(n), -_values(n), _values(n)[::-1] * 1e-9]
    rows = fragments.rows(np.array(columns).reshape(3, n) if block else columns)
    assert len(rows) == 3
    for row, values in zip(rows, columns, strict=True):
        expected = fragments.rows([values])[0]
        assert (bytes(row) == bytes(expected)) if fragments is not _Lists else row == expected


@pytest.mark.parametrize(
    "stations",
    [["s"], ["cf", "x", "regime"], ["y", "delta_star", "theta"], [], list(STATION_QUANTITIES)],
)
@pytest.mark.parametrize("surface", [False, True], ids=["contour", "surface"])
def test_a_subset_of_arrays_is_exactly_those_arrays(stations: list[str], surface: bool) -> None:
    """``output.stations`` as a list: the sides carry exactly the arrays named, equal to the
    full answer's, written alike from lists and from fragments (JSON and MessagePack)."""
    doc = ellipse_case(40)
    if surface:
        doc = {
            "surface": {"s": np.linspace(0.0, 1.0, 60).tolist()},
            "pressure": {"edge_velocity": [1.0] * 60},
            "flow": {"reynolds": 1e6},
        }
    full = msgspec.to_builtins(ibl.run(ibl.parse_case(doc)))
    case = ibl.parse_case(dict(doc, output={"stations": stations}))
    typed = ibl.run(case)
    subset = msgspec.to_builtins(typed)
    for side, whole in zip(subset["sides"], full["sides"], strict=True):
        assert set(STATION_QUANTITIES) & set(side) == set(stations)
        assert side == {k: v for k, v in whole.items() if k in side}
        assert set(whole) - set(side) == set(STATION_QUANTITIES) - set(stations)
    assert msgspec.json.encode(ibl.run(case, arrays="json")) == msgspec.json.encode(typed)
    assert msgspec.msgpack.encode(ibl.run(case, arrays="msgpack")) == msgspec.msgpack.encode(typed)

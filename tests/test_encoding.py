"""Station arrays written straight from numpy give the bytes msgspec writes for the lists.

The reference is msgspec's own JSON and MessagePack encoders applied to the Python lists
of the ``"list"`` result; array lengths cover every MessagePack array header (fixarray up
to 15 entries, array 16 up to 65,535, array 32 beyond).  Whole results are compared in
``tests/test_properties.py`` on random cases.
"""

from __future__ import annotations

import math

import msgspec
import numpy as np
import pytest

from ibl.analysis import _Json, _Lists, _Msgpack

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
def test_rows_equal_each_row_on_its_own(n: int, fragments: type) -> None:
    columns = [_values(n), -_values(n), _values(n)[::-1] * 1e-9]
    rows = fragments.rows(columns)
    assert len(rows) == 3
    for row, values in zip(rows, columns, strict=True):
        expected = fragments.rows([values])[0]
        assert (bytes(row) == bytes(expected)) if fragments is not _Lists else row == expected

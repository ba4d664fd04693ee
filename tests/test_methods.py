"""The registry of methods and the named parameter columns of the compiled march.

What is checked, and against what:
- the option values that ``ibl.schema`` accepts for ``laminar.method`` and
  ``turbulent.method`` are exactly the registry's names of that kind, with the same
  default (a method in one and not the other would be refused by the schema or never
  reach the kernel);
- the codes of a kind are 0, 1, ... in row order, and every row's module holds its
  compiled entry (``ibl.methods.Method.entry``);
- ``ibl.turbulent.METHODS`` and the catalogue's laminar methods are the registry's rows;
- every named column of ``ibl.columns`` has its position constant, and the kernel reads
  no parameter column by a bare number (the source text).
"""

from __future__ import annotations

import importlib
import re
import typing
from pathlib import Path

import pytest

from ibl import columns, kernel, methods, registry, turbulent
from ibl.schema import LaminarOptions, TurbulentOptions

OPTIONS = {"laminar": LaminarOptions, "turbulent": TurbulentOptions}


def _literal_values(tp: object) -> set[str]:
    """The string values of the Literal inside an annotation (through Annotated/Union)."""
    found: set[str] = set()
    for arg in typing.get_args(tp):
        if isinstance(arg, str):
            found.add(arg)
        else:
            found |= _literal_values(arg)
    return found


@pytest.mark.parametrize("kind", ["laminar", "turbulent"])
def test_schema_options_are_the_registry(kind: str) -> None:
    options = OPTIONS[kind]
    hints = typing.get_type_hints(options, include_extras=True)
    rows = methods.methods(kind)  # type: ignore[arg-type]
    assert _literal_values(hints["method"]) == set(rows)
    assert next(iter(rows)) == options().method  # the default is the code-0 row


@pytest.mark.parametrize("kind", ["laminar", "turbulent"])
def test_codes_and_entries(kind: str) -> None:
    rows = list(methods.methods(kind).values())  # type: ignore[arg-type]
    assert [m.code for m in rows] == list(range(len(rows)))
    assert [m for m in methods.REGISTRY if m.kind == kind] == rows
    for m in rows:
        assert callable(getattr(importlib.import_module(m.module), m.entry)), m


def test_readers_of_the_registry() -> None:
    for name, m in methods.methods("turbulent").items():
        row = turbulent.METHODS[name]
        assert (row.code, row.name, row.skin_friction) == (m.code, m.label, m.skin_friction)
    assert set(registry.LAMINAR_METHODS) == set(methods.methods("laminar"))
    assert kernel.LAMINAR_SUPPLIED == methods.code("laminar", "finite_difference")
    assert kernel.METHOD_LAG_ENTRAINMENT == methods.code("turbulent", "lag_entrainment")


def test_named_columns() -> None:
    constants = {
        name: value
        for name, value in vars(columns).items()
        if re.fullmatch(r"[IR]_[A-Z_]+", name) and isinstance(value, int)
    }
    for prefix, names in (("I_", columns.INT_COLUMNS), ("R_", columns.REAL_COLUMNS)):
        for position, name in enumerate(names):
            assert constants.pop(prefix + name.upper()) == position
    assert not constants  # no constant without its column


def test_kernel_reads_no_bare_column() -> None:
    source = Path(kernel.__file__).read_text(encoding="utf-8")
    bare = re.findall(r"\b(?:ints|reals)\[[^\]]*,\s*\d+\s*\]", source)
    assert not bare, bare

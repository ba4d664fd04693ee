"""Errors raised for misuse: a bad case names the offending fields.

Numerical outcomes (separation, transition, a bubble) are never errors; they are
part of the result document.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

__all__ = ["CaseError", "FieldProblem", "msgspec_path_to_pointer"]


@dataclass(frozen=True, slots=True)
class FieldProblem:
    """One offending field: a JSON pointer (RFC 6901) into the case and the reason."""

    pointer: str
    reason: str


class CaseError(ValueError):
    """A case that cannot be analysed, with one ``FieldProblem`` per offending field."""

    def __init__(self, problems: list[FieldProblem] | FieldProblem) -> None:
        self.problems = [problems] if isinstance(problems, FieldProblem) else list(problems)
        text = "; ".join(f"`{p.pointer or '/'}`: {p.reason}" for p in self.problems)
        super().__init__(text)

    @classmethod
    def at(cls, pointer: str, reason: str) -> CaseError:
        """Build an error for a single field."""
        return cls(FieldProblem(pointer, reason))


_PATH_TOKEN = re.compile(r"\.([A-Za-z_][A-Za-z0-9_]*)|\[(\d+)\]|\[\"([^\"]*)\"\]")


def msgspec_path_to_pointer(path: str) -> str:
    """Turn a msgspec error path such as ``$.pressure.cp[17]`` into ``/pressure/cp/17``.

    >>> msgspec_path_to_pointer("$.pressure.cp[17]")
    '/pressure/cp/17'
    >>> msgspec_path_to_pointer("$")
    ''
    """
    tokens = []
    for name, index, key in _PATH_TOKEN.findall(path.removeprefix("$")):
        token = name or index or key
        tokens.append(token.replace("~", "~0").replace("/", "~1"))
    return "".join("/" + t for t in tokens)

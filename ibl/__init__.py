"""ibl: integral boundary-layer and transition estimates from a surface pressure distribution.

Early-design estimates only: confirm them by testing or higher-fidelity analysis.

Public API
----------
- ``analyze(doc)``: case document (dict, JSON bytes/str or ``Case``) to result document (dict).
- ``parse_case(doc)``: validate a case document into a typed ``Case``.
- ``run(case)`` / ``run_batch(cases)``: typed ``Case`` to typed ``Result``; a batch is
  marched in lockstep.
- ``CaseError`` / ``FieldProblem``: misuse, naming each offending field by JSON pointer.
"""

from ibl.analysis import analyze, parse_case, run, run_batch
from ibl.errors import CaseError, FieldProblem
from ibl.schema import Case, Result

__all__ = [
    "Case",
    "CaseError",
    "FieldProblem",
    "Result",
    "analyze",
    "parse_case",
    "run",
    "run_batch",
]
__version__ = "0.1.0"

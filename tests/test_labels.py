"""What a practitioner reads says exactly what it means: one caution text everywhere, and no
bare "[memory]" marks in user-facing output (they are spelled out)."""

from __future__ import annotations

import json

from ibl import registry
from ibl.analysis import CAUTION
from ibl.cli import main
from ibl.validation import report_text, validate
from ibl_service.openapi import COMMITTED


def test_one_caution_text_everywhere(capsys) -> None:
    """The result, the CLI summary and the API description carry the same caution text."""
    assert main(["demo"]) == 0
    assert CAUTION in capsys.readouterr().out.replace("\n", " ")
    described = COMMITTED.read_text()
    assert json.dumps(CAUTION)[1:-1] in described


def test_recalled_values_are_spelled_out() -> None:
    """Values recalled from the literature are marked in words in the validation report and
    the method catalogue."""
    text = report_text(validate())
    assert "[memory]" not in text and registry.RECALLED in text
    catalogue = json.dumps(registry.catalogue())
    assert "[memory]" not in catalogue and registry.RECALLED in catalogue

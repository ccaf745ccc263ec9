"""The sheet-format document's own examples parse: a reader who copies one gets a working sheet."""

from __future__ import annotations

import json
import re
from pathlib import Path

from linetools import gravity_line

from calc.analysis import analyse
from calc.model.sheet import parse

DOC = Path(__file__).resolve().parents[3] / "docs" / "sheet-format.md"


def examples() -> list[dict]:
    out = []
    for block in re.findall(r"```json\n(.*?)```", DOC.read_text(), re.S):
        text = block.strip()
        if text.startswith('"'):  # a fragment of a sheet, e.g. "settings": {...}: set into a blank sheet
            doc = gravity_line()
            doc.update(json.loads("{" + text + "}"))
        else:
            doc = json.loads(text)
        out.append(doc)
    return out


def test_there_are_examples():
    assert len(examples()) >= 2


def test_every_example_parses_and_solves():
    for doc in examples():
        parsed = parse(doc)
        assert parsed.ok, [(e.path, e.message) for e in parsed.errors]
        assert analyse(doc).ok

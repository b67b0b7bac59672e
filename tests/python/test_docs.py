"""docs/python.md's examples run as written, in order, in one namespace."""

from __future__ import annotations

import re
import warnings

import pytest

from conftest import ROOT


def test_python_guide_examples_run(monkeypatch):
    pytest.importorskip("pandas")
    text = (ROOT / "docs" / "python.md").read_text(encoding="utf-8")
    blocks = re.findall(r"```python\n(.*?)```", text, flags=re.S)
    assert len(blocks) >= 8
    monkeypatch.chdir(ROOT)
    namespace: dict = {}
    with warnings.catch_warnings():
        # progress=True draws a bar; the examples themselves must not warn otherwise.
        for i, block in enumerate(blocks):
            exec(compile(block, f"docs/python.md block {i + 1}", "exec"), namespace)
    assert namespace["schmitt"].nominal_values["up"] == pytest.approx(1.0, abs=1e-12)
    assert namespace["partial"].complete is False
    assert len(namespace["sweep"]) == 4

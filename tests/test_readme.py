"""The README's Python examples run as doctests, so the documented API cannot drift.

Every ```python block of README.md is run with ``doctest`` in a fresh empty folder, in
order, sharing one namespace (as a reader pasting them into one session would).
"""

from __future__ import annotations

import doctest
import re
from pathlib import Path

import pytest

README = Path(__file__).resolve().parents[1] / "README.md"


def python_blocks(text: str) -> list[str]:
    return re.findall(r"^```python\n(.*?)^```", text, flags=re.DOTALL | re.MULTILINE)


def test_readme_has_api_examples():
    blocks = python_blocks(README.read_text(encoding="utf-8"))
    assert blocks and all(">>>" in b for b in blocks)


def test_readme_python_examples_run(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    parser = doctest.DocTestParser()
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    globs: dict = {}
    for n, block in enumerate(python_blocks(README.read_text(encoding="utf-8"))):
        test = parser.get_doctest(block, globs, f"README block {n + 1}", str(README), 0)
        runner.run(test, clear_globs=False)
        globs = test.globs  # DocTest copies its globals: carry them to the next block
    result = runner.summarize(verbose=False)
    assert result.attempted > 0
    assert result.failed == 0, "a README example failed (doctest output above)"


@pytest.mark.parametrize("module", ["meshgen.case.loading", "meshgen.pipeline.api"])
def test_docstring_examples_run(module):
    import importlib

    result = doctest.testmod(importlib.import_module(module))
    assert result.failed == 0

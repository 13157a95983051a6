"""The README's Python snippets and the package docstring run as written."""

from __future__ import annotations

import doctest
import pathlib
import re

import plumbfit

ROOT = pathlib.Path(__file__).resolve().parents[2]


def python_blocks(path: pathlib.Path) -> list[str]:
    return re.findall(r"```python\n(.*?)```", path.read_text(), flags=re.S)


def test_readme_snippets_run() -> None:
    blocks = python_blocks(ROOT / "README.md") + python_blocks(ROOT / "py-bindings" / "README.md")
    assert blocks, "no python snippets found"
    for code in blocks:
        exec(compile(code, "<readme>", "exec"), {})


def test_package_docstring_examples() -> None:
    result = doctest.testmod(plumbfit, optionflags=doctest.ELLIPSIS)
    assert result.attempted > 0
    assert result.failed == 0

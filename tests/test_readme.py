"""The README's Python examples run as written (doctest).

Every ```python block of README.md is a doctest; the blocks share one
namespace, in order, and run from the repository root (the examples'
paths are relative to it). ELLIPSIS stands for output that may change
without the example being wrong (a list of candidates, a message's
wording).
"""

import doctest
import os
import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def python_blocks(text):
    return re.findall(r"^```python\n(.*?)^```", text, flags=re.S | re.M)


def test_readme_has_python_examples():
    blocks = python_blocks((ROOT / "README.md").read_text(encoding="utf-8"))
    assert len(blocks) >= 4
    assert all(">>> " in block for block in blocks)


def test_readme_python_examples_run(monkeypatch):
    monkeypatch.chdir(ROOT)
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    parser = doctest.DocTestParser()
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    namespace = {}
    for number, block in enumerate(python_blocks(text), start=1):
        test = parser.get_doctest(block, namespace, f"README.md python block {number}",
                                  "README.md", 0)
        runner.run(test, clear_globs=False)
        namespace = test.globs
    result = runner.summarize(verbose=False)
    assert result.attempted >= 20
    assert result.failed == 0, f"{result.failed} README example(s) failed (see the output above)"

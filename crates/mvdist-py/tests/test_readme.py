"""The README's Python quick start runs as written."""

import os
import re
from pathlib import Path

import pytest

README = Path(__file__).resolve().parents[3] / "README.md"


def test_readme_python_quick_start(tmp_path, capsys):
    if not README.exists():
        pytest.skip("README not found next to the package")
    text = README.read_text(encoding="utf-8")
    section = text.split("## From Python", 1)[1]
    code = re.search(r"```python\n(.*?)```", section, re.S).group(1)
    cwd = os.getcwd()
    os.chdir(tmp_path)
    try:
        exec(compile(code, "README.md", "exec"), {})
    finally:
        os.chdir(cwd)
    out = capsys.readouterr().out
    assert "Henze-Zirkler" in out
    assert (tmp_path / "cultivar0.json").exists()

"""The README's Python example runs as written, from the repository root."""

import os
import re

from .conftest import here


def test_readme_python_blocks_run():
    root = here().parent
    text = (root / "README.md").read_text()
    blocks = re.findall(r"```python\n(.*?)```", text, flags=re.S)
    assert blocks
    cwd = os.getcwd()
    os.chdir(root)
    try:
        for code in blocks:
            exec(compile(code, "README.md", "exec"), {})
    finally:
        os.chdir(cwd)

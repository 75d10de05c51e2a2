"""Sizes of the package's files and functions (lines), for keeping the edges readable.

Prints the largest files (lines) and the largest functions (lines of code, docstring left
out) of ``torque/``, and how many public functions and classes lack a numpydoc
``Parameters`` (or ``Attributes``) section::

    python scripts/code_sizes.py [--most N]
"""

from __future__ import annotations

import argparse
import ast
import re
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "torque"


def public_api(tree):
    """Module-level public functions and classes, and public methods of public classes."""
    for node in tree.body:
        if isinstance(node, (ast.FunctionDef, ast.ClassDef)) and not node.name.startswith("_"):
            yield node, node.name
            if isinstance(node, ast.ClassDef):
                for m in node.body:
                    if (isinstance(m, ast.FunctionDef) and not m.name.startswith("_")
                            and not any(isinstance(d, ast.Name) and d.id in
                                        ("property", "cached_property")
                                        for d in m.decorator_list)):
                        yield m, f"{node.name}.{m.name}"


def needs_parameters(node) -> bool:
    """A function with arguments beyond self/cls, or a class with fields or __init__."""
    if isinstance(node, ast.ClassDef):
        return any(isinstance(s, ast.AnnAssign) for s in node.body) or any(
            isinstance(s, ast.FunctionDef) and s.name == "__init__" for s in node.body)
    args = [a.arg for a in node.args.args + node.args.kwonlyargs]
    return bool([a for a in args if a not in ("self", "cls")] or node.args.vararg
                or node.args.kwarg)


def sizes():
    files, funcs, undocumented = [], [], []
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(PACKAGE.parent).as_posix()
        text = path.read_text()
        tree = ast.parse(text)
        lines = text.splitlines()
        doc_lines = set()
        for node in ast.walk(tree):
            body = getattr(node, "body", None)
            if (isinstance(body, list) and body and isinstance(body[0], ast.Expr)
                    and isinstance(body[0].value, ast.Constant)
                    and isinstance(body[0].value.value, str)):
                doc_lines.update(range(body[0].lineno, body[0].end_lineno + 1))
        code = sum(1 for i, l in enumerate(lines, 1)
                   if i not in doc_lines and l.strip() and not l.strip().startswith("#"))
        files.append((len(lines), code, rel))
        for node in ast.walk(tree):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                # lines of code: the docstring does not count
                first = node.body[0]
                doc = (first.end_lineno - first.lineno + 1
                       if isinstance(first, ast.Expr) and isinstance(first.value, ast.Constant)
                       and isinstance(first.value.value, str) else 0)
                funcs.append((node.end_lineno - node.lineno + 1 - doc, f"{rel}:{node.name}"))
        for node, name in public_api(tree):
            doc = ast.get_docstring(node) or ""
            if not doc or (needs_parameters(node) and not re.search(
                    r"^\s*(Parameters|Attributes)\n\s*-{3,}", doc, re.M)):
                undocumented.append(f"{rel}:{name}")
    return sorted(files, reverse=True), sorted(funcs, reverse=True), undocumented


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--most", type=int, default=8)
    ap.add_argument("--undocumented", action="store_true", help="list them")
    args = ap.parse_args(argv)
    files, funcs, undocumented = sizes()
    print(f"{len(files)} files, {sum(f[0] for f in files)} lines ({sum(f[1] for f in files)} of "
          f"code: no docstrings, comments or blank lines), {len(funcs)} functions; "
          f"{len(undocumented)} public functions and classes without a numpydoc "
          "Parameters/Attributes section")
    print("largest files (lines, lines of code):")
    for n, code, name in files[:args.most]:
        print(f"  {n:5d} {code:5d}  {name}")
    print("largest functions:")
    for n, name in funcs[:args.most]:
        print(f"  {n:5d}  {name}")
    if args.undocumented:
        print("without a Parameters/Attributes section:")
        for name in undocumented:
            print(f"  {name}")


if __name__ == "__main__":
    main()

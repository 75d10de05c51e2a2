"""Hypothesis files (TOML): read one into a :class:`~torque.hypothesis.Hypothesis`, or
write one."""

from __future__ import annotations

import json
from pathlib import Path

from ..hypothesis import Hypothesis, hypothesis_from_dict
from .files import atomic_write, read_toml

__all__ = ["load_hypothesis", "toml_value", "hypothesis_toml", "write_hypothesis"]


def load_hypothesis(path) -> Hypothesis:
    """Read a hypothesis TOML file (see the contract).

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    Hypothesis
        Named by the file's ``name``, else the file's stem; ``source`` is the path.

    Raises
    ------
    InputError
        Naming the file and the key: malformed TOML, unknown keys or kinds, bad values.
    """
    path = Path(path)
    return hypothesis_from_dict(read_toml(path), name=path.stem, file=path)


def toml_value(v) -> str:
    """A number, string or list as TOML text.

    Parameters
    ----------
    v : str, number or list

    Returns
    -------
    str
    """
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    return repr(float(v)) if isinstance(v, float) else str(v)


def hypothesis_toml(name: str, forces, spread=None, comment: str | None = None) -> str:
    """The text of a hypothesis file.

    Parameters
    ----------
    name : str
    forces : sequence of dict
        One ``[[force]]`` table each, in order.
    spread : dict, optional
        ``{key: {"normal": sd}}`` or ``{key: {"uniform": [low, high]}}``.
    comment : str, optional
        A first line, written as a TOML comment.
    """
    lines = ([f"# {comment}"] if comment else []) + [f"name = {toml_value(name)}", ""]
    if spread:
        lines += ["[spread]"] + [
            f"{k} = {{ {next(iter(v))} = {toml_value(next(iter(v.values())))} }}"
            for k, v in spread.items()] + [""]
    for f in forces:
        lines.append("[[force]]")
        lines += [f"{k} = {toml_value(v)}" for k, v in f.items()]
        lines.append("")
    return "\n".join(lines)


def write_hypothesis(path, name: str, forces, spread=None, comment=None) -> None:
    """Write a hypothesis file (see :func:`hypothesis_toml`), atomically.

    Parameters
    ----------
    path : str or Path
    name : str
    forces : sequence of dict
    spread : dict, optional
    comment : str, optional
    """
    with atomic_write(path) as fh:
        fh.write(hypothesis_toml(name, forces, spread, comment))

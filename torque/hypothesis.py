"""Hypothesis files: which forces act, and what is known of each coefficient.

A hypothesis is a name, the lithosphere physics, and a list of force entries. Each entry
has a ``kind`` (one module of :mod:`torque.forces`), a ``coefficient`` (a number, fixed, or
``"free"``, to be estimated), optional ``bounds`` for a free coefficient, an optional
``label`` and the options of its kind.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import InputError
from .lithosphere import Physics
from .world import read_toml

TOP_KEYS = ("name", "physics", "force", "spread")
COMMON_KEYS = {
    "kind": "the force kind",
    "coefficient": 'a number (fixed) or "free" (estimated by fit); default "free"',
    "bounds": "[low, high] for a free coefficient; default [0, inf)",
    "label": "name of the term in outputs; default the kind (drag: drag_REGION)",
}


@dataclass(frozen=True)
class ForceSpec:
    """One force entry of a hypothesis."""

    kind: str
    label: str
    coefficient: float | None          # None when free
    bounds: tuple = (0.0, np.inf)
    options: dict = field(default_factory=dict)

    @property
    def free(self) -> bool:
        return self.coefficient is None

    def option(self, key, default=None):
        return self.options.get(key, default)


@dataclass(frozen=True)
class Hypothesis:
    """A driving-force hypothesis: physics and force entries."""

    name: str
    physics: Physics
    forces: tuple
    source: str | None = None
    spread: dict = field(default_factory=dict)

    @property
    def labels(self) -> list:
        return [f.label for f in self.forces]

    @property
    def free_labels(self) -> list:
        return [f.label for f in self.forces if f.free]


def _number(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def parse_force(entry: dict, index: int, file=None) -> ForceSpec:
    """One ``[[force]]`` table, checked against the keys of its kind."""
    from .forces import KINDS

    where = f"[[force]] {index + 1}"
    if not isinstance(entry, dict):
        raise InputError("each [[force]] must be a table", file=file, where=where)
    kind = entry.get("kind")
    if kind not in KINDS:
        raise InputError(f"unknown force kind {kind!r}", file=file, where=where,
                         hint=f"valid kinds: {', '.join(KINDS)}")
    module = KINDS[kind]
    allowed = dict(COMMON_KEYS, **module.KEYS)
    unknown = sorted(set(entry) - set(allowed))
    if unknown:
        raise InputError(f"unknown key(s) {', '.join(map(repr, unknown))} for kind {kind!r}",
                         file=file, where=where, hint=f"valid keys: {', '.join(allowed)}")
    coef = entry.get("coefficient", "free")
    if coef == "free":
        value = None
    elif _number(coef) and np.isfinite(coef):
        value = float(coef)
    else:
        raise InputError(f'coefficient must be a number or "free", got {coef!r}', file=file,
                         where=where)
    bounds = entry.get("bounds", [0.0, np.inf])
    if (not isinstance(bounds, list) or len(bounds) != 2 or not all(map(_number, bounds))
            or np.isnan(bounds).any()):
        raise InputError(f"bounds must be [low, high], got {bounds!r}", file=file, where=where)
    if bounds[0] > bounds[1]:
        raise InputError(f"bounds have low > high: {bounds!r}", file=file, where=where,
                         hint="write them as [low, high]")
    if "bounds" in entry and value is not None:
        raise InputError("bounds are for a free coefficient; this one is fixed", file=file,
                         where=where)
    options = {k: v for k, v in entry.items() if k not in COMMON_KEYS}
    for k, v in options.items():
        choices = getattr(module, "CHOICES", {}).get(k)
        if choices is not None:
            if v not in choices:
                raise InputError(f"{k} must be one of {', '.join(map(repr, choices))}, got "
                                 f"{v!r}", file=file, where=where)
        elif not (_number(v) and np.isfinite(v)):
            raise InputError(f"{k} must be a finite number, got {v!r}", file=file, where=where)
        elif k in getattr(module, "POSITIVE", ()) and not v > 0:
            raise InputError(f"{k} must be positive, got {v!r}", file=file, where=where)
    options = {**getattr(module, "DEFAULTS", {}), **options}
    label = entry.get("label") or module.default_label(options)
    if not isinstance(label, str):
        raise InputError(f"label must be a string, got {label!r}", file=file, where=where)
    return ForceSpec(kind, label, value, (float(bounds[0]), float(bounds[1])), options)


def load_hypothesis(path) -> Hypothesis:
    """Read a hypothesis TOML file (see the contract); errors name the key and the file."""
    path = Path(path)
    cfg = read_toml(path)
    return hypothesis_from_dict(cfg, name=path.stem, file=path)


def hypothesis_from_dict(cfg: dict, name: str = "hypothesis", file=None) -> Hypothesis:
    """A hypothesis from the same structure as the TOML file, e.g. for use in notebooks."""
    unknown = sorted(set(cfg) - set(TOP_KEYS))
    if unknown:
        raise InputError(f"unknown key(s) {', '.join(map(repr, unknown))}", file=file,
                         hint=f"valid keys: {', '.join(TOP_KEYS)} ([physics], [[force]], "
                         "[spread])")
    for key, kind in (("physics", "a table: [physics]"), ("spread", "a table: [spread]"),
                      ("force", "an array of tables: [[force]]")):
        want = list if key == "force" else dict
        if key in cfg and not isinstance(cfg[key], want):
            raise InputError(f"{key!r} must be {kind}, got {cfg[key]!r}", file=file)
    if "name" in cfg and not isinstance(cfg["name"], str):
        raise InputError(f"name must be a string, got {cfg['name']!r}", file=file)
    physics = Physics.from_table(cfg.get("physics", {}), file)
    entries = cfg.get("force", [])
    if not entries:
        raise InputError("the hypothesis has no [[force]] entries", file=file)
    forces = [parse_force(e, i, file) for i, e in enumerate(entries)]
    seen = {}
    for i, f in enumerate(forces):
        if f.label in seen:
            raise InputError(f"two forces have the label {f.label!r} (entries {seen[f.label]} "
                             f"and {i + 1}); give one a different label", file=file)
        seen[f.label] = i + 1
    title = cfg.get("name", name)
    from .resample import parse_spread
    spread = parse_spread(cfg.get("spread", {}), physics, file)
    return Hypothesis(str(title), physics, tuple(forces), None if file is None else str(file),
                      spread)

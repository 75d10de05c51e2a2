"""Hypothesis files: which forces act, and what is known of each coefficient.

A hypothesis is a name, the lithosphere physics, and a list of force entries. Each entry
has a ``kind`` (one module of :mod:`torque.forces`), a ``coefficient`` (a number, fixed, or
``"free"``, to be estimated), optional ``bounds`` for a free coefficient, an optional
``label`` and the options of its kind.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np

from .errors import InputError
from .lithosphere import Cooling, Physics

__all__ = ["TOP_KEYS", "COMMON_KEYS", "ForceSpec", "Hypothesis", "RENAMED_KINDS",
           "parse_force", "hypothesis_from_dict", "parse_spread", "slab_depth_km",
           "cooling_table"]

TOP_KEYS = ("name", "physics", "force", "spread")
COMMON_KEYS = {
    "kind": "the force kind",
    "coefficient": 'a number (fixed) or "free" (estimated by fit); default "free"',
    "bounds": "[low, high] for a free coefficient; default [0, inf)",
    "label": "name of the term in outputs; default the kind (drag: drag_REGION)",
}


@dataclass(frozen=True)
class ForceSpec:
    """One force entry of a hypothesis.

    Attributes
    ----------
    kind : str
        A key of :data:`torque.forces.KINDS`.
    label : str
        The term's name in outputs.
    coefficient : float or None
        The fixed value, or None when free.
    bounds : tuple of float
        ``(low, high)`` of a free coefficient.
    options : dict
        The kind's own keys, defaults filled in.
    note : str, optional
        What a user should know of how the entry was read (an old kind name, say); it is
        carried into the term's notes.
    """

    kind: str
    label: str
    coefficient: float | None          # None when free
    bounds: tuple = (0.0, np.inf)
    options: dict = field(default_factory=dict)
    note: str | None = None

    @property
    def free(self) -> bool:
        return self.coefficient is None

    def option(self, key, default=None):
        """One of the entry's options, or ``default``.

        Parameters
        ----------
        key : str
        default : object, optional

        Returns
        -------
        object
        """
        return self.options.get(key, default)


@dataclass(frozen=True)
class Hypothesis:
    """A driving-force hypothesis: physics and force entries.

    Attributes
    ----------
    name : str
    physics : Physics
    forces : tuple of ForceSpec
    source : str, optional
        The file it was read from.
    spread : dict
        ``{physics key: ("normal", sd) or ("uniform", (low, high))}``.
    """

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


#: Force kinds renamed, old name -> new; the old name is read with a note, and stays the
#: default label so that fits of old files keep their labels.
RENAMED_KINDS = {"trench": "subduction_resistance"}


def _number(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def parse_force(entry: dict, index: int, file=None) -> ForceSpec:
    """One ``[[force]]`` table, checked against the keys of its kind.

    Parameters
    ----------
    entry : dict
        The table.
    index : int
        Its position among the entries (0-based), for messages.
    file : str or Path, optional

    Returns
    -------
    ForceSpec
    """
    from .forces import KINDS

    where = f"[[force]] {index + 1}"
    if not isinstance(entry, dict):
        raise InputError("each [[force]] must be a table", file=file, where=where)
    kind = entry.get("kind")
    note = None
    old_kind = kind if isinstance(kind, str) and kind in RENAMED_KINDS else None
    if old_kind:
        kind = RENAMED_KINDS[old_kind]
        note = (f"force kind {old_kind!r} is now called {kind!r} (it resists motion along "
                f"boundaries of kind 'subduction'); the old name still works, and stays the "
                f"term's default label")
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
    label = entry.get("label") or old_kind or module.default_label(options)
    if not isinstance(label, str):
        raise InputError(f"label must be a string, got {label!r}", file=file, where=where)
    return ForceSpec(kind, label, value, (float(bounds[0]), float(bounds[1])), options, note)


def hypothesis_from_dict(cfg: dict, name: str = "hypothesis", file=None) -> Hypothesis:
    """A hypothesis from the same structure as the TOML file, e.g. for use in notebooks.

    Parameters
    ----------
    cfg : dict
        Keys ``name``, ``physics``, ``force`` (a list of tables), ``spread``.
    name : str
        The name when ``cfg`` has none.
    file : str or Path, optional
        Named in messages and kept as ``source``.

    Returns
    -------
    Hypothesis

    Examples
    --------
    >>> h = hypothesis_from_dict({"name": "ridge and drag", "force": [
    ...     {"kind": "ridge", "coefficient": 1.0}, {"kind": "drag", "region": "ocean"}]})
    >>> h.labels, h.free_labels
    (['ridge', 'drag_ocean'], ['drag_ocean'])
    >>> h.physics.model, h.forces[1].bounds
    ('plate', (0.0, inf))
    """
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
    spread = parse_spread(cfg.get("spread", {}), physics, file)
    return Hypothesis(str(title), physics, tuple(forces), None if file is None else str(file),
                      spread)


def parse_spread(table: dict, physics, file=None) -> dict:
    """Physics parameters given as distributions: ``{key: {"normal": sd}}`` or
    ``{key: {"uniform": [low, high]}}`` (the hypothesis file's ``[spread]`` table).

    Parameters
    ----------
    table : dict
    physics : Physics
        Whose numbers may be given a spread.
    file : str or Path, optional

    Returns
    -------
    dict
        ``{key: ("normal", sd)}`` or ``{key: ("uniform", (low, high))}``.
    """
    names = {f.name for f in dataclasses.fields(physics)} - {"model"}
    out = {}
    for key, spec in table.items():
        if key not in names:
            raise InputError(f"[spread] names {key!r}, which is not a [physics] number",
                             file=file, hint=f"valid: {', '.join(sorted(names))}")
        if not isinstance(spec, dict) or len(spec) != 1:
            raise InputError(f"[spread] {key} must be {{normal = SD}} or "
                             "{uniform = [LOW, HIGH]}", file=file)
        (kind, val), = spec.items()
        if kind == "normal" and isinstance(val, (int, float)) and val > 0:
            out[key] = ("normal", float(val))
        elif (kind == "uniform" and isinstance(val, list) and len(val) == 2
              and all(isinstance(v, (int, float)) for v in val) and val[0] < val[1]):
            out[key] = ("uniform", (float(val[0]), float(val[1])))
        else:
            raise InputError(f"[spread] {key}: {spec!r} is not {{normal = SD > 0}} or "
                             "{uniform = [LOW, HIGH]} with LOW < HIGH", file=file)
    return out


def slab_depth_km(hypothesis: Hypothesis) -> float:
    """The depth (km) the hypothesis' first slab entry gives its slabs, else the default.

    Parameters
    ----------
    hypothesis : Hypothesis

    Returns
    -------
    float
    """
    from .forces.slab import DEFAULT_DEPTH_KM
    return next((f.options.get("depth_km") for f in hypothesis.forces
                 if f.kind == "slab" and "depth_km" in f.options), DEFAULT_DEPTH_KM)


def cooling_table(hypothesis: Hypothesis, ages_myr) -> list:
    """The cooling model of a hypothesis against age: the rows of ``torque cooling``.

    Parameters
    ----------
    hypothesis : Hypothesis
        Its physics, and the depth of its slab entry (:func:`slab_depth_km`).
    ages_myr : sequence of float

    Returns
    -------
    list of dict
        One per age: ``age_myr``, ``depth_m``, ``heat_flow_mw_m2``, ``ridge_push_n_m``,
        ``slab_buoyancy_n_m`` (the negative buoyancy per metre of trench of a slab of that
        age reaching the slab depth: the slab pull at coefficient 1, before any fraction is
        taken), and ``slab_pull_n_m``, the same number under its old name (kept for files
        and scripts that read it).
    """
    c = Cooling(hypothesis.physics)
    t = np.asarray(ages_myr, float)
    cols = (t, c.depth_m(t), c.heat_flow_mw_m2(t), c.ridge_push_n_m(t),
            c.slab_pull_n_m(t, slab_depth_km(hypothesis)))
    keys = ("age_myr", "depth_m", "heat_flow_mw_m2", "ridge_push_n_m", "slab_buoyancy_n_m")
    rows = [dict(zip(keys, map(float, values))) for values in zip(*cols)]
    for row in rows:
        row["slab_pull_n_m"] = row["slab_buoyancy_n_m"]      # the old name, kept
    return rows

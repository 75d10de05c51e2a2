"""JSON results: strict JSON out (NaN written as null), and the fit file of ``torque fit``
read and checked in one place for ``predict``, ``map`` and the demo."""

from __future__ import annotations

import json

import numpy as np

from ..errors import InputError
from ..results import PREFERRED_FIT, Coefficient, FitResult, PlateResult
from .files import atomic_write, read_json

__all__ = ["dumps", "write_json", "read_fit"]


def _finite(obj):
    """A copy of ``obj`` for JSON: numpy values as Python ones, NaN and infinities as None
    (JSON has no token for them; a bare ``NaN`` makes the file unreadable elsewhere)."""
    if isinstance(obj, dict):
        return {k: _finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_finite(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return _finite(obj.tolist())
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float) and not np.isfinite(obj):
        return None
    return obj


def dumps(obj) -> str:
    """JSON text (strict: no NaN tokens) of results holding numpy values.

    Parameters
    ----------
    obj : dict, list or number
        May hold numpy arrays and scalars.

    Returns
    -------
    str
    """
    return json.dumps(_finite(obj), indent=2, allow_nan=False)


def write_json(path, obj, end: str = "") -> None:
    """Write results as strict JSON (see :func:`dumps`) followed by ``end``, atomically.

    Parameters
    ----------
    path : str or Path
    obj : dict, list or number
    end : str
        Text after the JSON (a newline, say).
    """
    with atomic_write(path) as fh:
        fh.write(dumps(obj) + end)


def read_fit(path, plate_names=None) -> FitResult:
    """Read and check the JSON written by ``torque fit``.

    Parameters
    ----------
    path : str or Path
    plate_names : list of str, optional
        The world's plates: the fit must list exactly these, in this order.

    Returns
    -------
    FitResult

    Raises
    ------
    InputError
        Naming the file: not JSON, not the output of ``torque fit``, a coefficient without
        a number, or (with ``plate_names``) a fit of other plates.
    """
    result = fit_from_dict(read_json(path), file=path)
    if plate_names is not None and result.plate_names != list(plate_names):
        raise InputError("the fit is for other plates than this world's", file=path)
    return result


def fit_from_dict(doc, file=None) -> FitResult:
    """The :class:`~torque.results.FitResult` of a fit JSON document, checked: the reading
    half of the fit JSON's round trip (the writing half is ``FitResult.as_dict``).

    Parameters
    ----------
    doc : dict
        As written by ``FitResult.as_dict`` (``torque fit``).
    file : str or Path, optional
        Named in messages.

    Returns
    -------
    FitResult

    Raises
    ------
    InputError
        If the document is not the output of ``torque fit``.
    """
    if not (isinstance(doc, dict) and isinstance(doc.get("coefficients"), dict)
            and isinstance(doc.get("plates"), list)
            and all(isinstance(p, dict) and "plate" in p for p in doc["plates"])):
        raise InputError("not the JSON output of torque fit (it needs 'coefficients' "
                         "and 'plates')", file=file)
    coefs = {}
    for label, c in doc["coefficients"].items():
        v = c.get("value") if isinstance(c, dict) else None
        if not isinstance(v, (int, float)) or isinstance(v, bool) or not np.isfinite(v):
            raise InputError(f"coefficient {label!r} has no numeric 'value'", file=file)

        def num(key, default=np.nan):
            x = c.get(key, default)
            return float(x) if isinstance(x, (int, float)) else np.nan

        def optional(key):
            x = c.get(key)
            return float(x) if isinstance(x, (int, float)) and not isinstance(x, bool) \
                else None
        at = c.get("at_bound")
        coefs[label] = Coefficient(float(v), num("stderr", 0.0), bool(c.get("free", False)),
                                   str(c.get("unit", "")), num("torque_space_value"),
                                   num("torque_space_stderr"), optional("profile_low"),
                                   optional("profile_high"),
                                   at if at in ("lower", "upper") else None,
                                   optional("classical_stderr"), optional("robust_stderr"),
                                   optional("quantile"),
                                   c.get("profile_low_at_bound") is True,
                                   c.get("profile_high_at_bound") is True)
    return FitResult(str(doc.get("hypothesis", "")), coefs,
                     tuple(PlateResult.from_dict(p) for p in doc["plates"]),
                     dict(doc.get("misfit") or {}), dict(doc.get("uncertainty") or {}),
                     tuple(doc.get("notes") or ()),
                     str(doc.get("preferred_fit", PREFERRED_FIT)),
                     doc.get("frame") if isinstance(doc.get("frame"), dict) else None)

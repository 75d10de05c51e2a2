"""Resistance at collision boundaries, proportional to the relative velocity of the two plates
(see :mod:`torque.forces._resistance`)."""

from __future__ import annotations

from .base import ForceTerm
from ._resistance import CHOICES, DEFAULTS, KEYS, UNIT, build_resistance  # noqa: F401

KIND = "collision"


def default_label(options) -> str:
    return KIND


def build(ctx, spec) -> ForceTerm:
    return build_resistance(ctx, spec, "collision")

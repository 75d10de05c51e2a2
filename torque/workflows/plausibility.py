"""Plausibility guards: warnings for inputs and results whose size says a unit is wrong.

Nothing here refuses anything (a strange planet may be meant); each guard returns one line
that names the file, says what is out of range and which unit was probably meant. The
ranges are generous and stated with their sources:

* plate speeds: the fastest plates on Earth move at up to about 200 mm/yr at their fastest
  point on the outline (Cox and Hart 1986, *Plate Tectonics: How It Works*, ch. 1; from memory), so a speed
  above :data:`MAX_SPEED_MM_YR` somewhere on a plate, or every plate below
  :data:`MIN_SPEED_MM_YR` everywhere, is taken as a unit mistake (rates are read in
  deg/Myr; 1 deg/Myr is 111 mm/yr at the equator, and 5.5e-16 rad/s);
* sea-floor ages: the oldest ocean floor is about 180-200 Myr (Turcotte and Schubert 2014,
  *Geodynamics*, 3rd ed., sec. 4.23; from memory): a grid whose oldest age is below
  :data:`MIN_OLDEST_AGE_MYR` or above :data:`MAX_AGE_MYR` is taken as in another unit;
* fitted coefficients: a basal drag coefficient is the asthenosphere's viscosity over its
  thickness, 1e19-1e21 Pa s over 100-300 km, about 3e13 to 1e16 Pa s/m (Turcotte and
  Schubert 2014, ch. 6, the viscosity of the mantle; from memory), here allowed from
  :data:`DRAG_RANGE_PA_S_M`; a slab-pull fraction is a share of the slab's full negative
  buoyancy, at most 1 (common practice, no source), here allowed up to
  :data:`MAX_SLAB_FRACTION`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["MAX_SPEED_MM_YR", "MIN_SPEED_MM_YR", "MIN_OLDEST_AGE_MYR", "MAX_AGE_MYR",
           "DRAG_RANGE_PA_S_M", "MAX_SLAB_FRACTION", "motion_warnings", "age_warnings",
           "coefficient_warnings", "input_warnings"]

MAX_SPEED_MM_YR = 300.0
MIN_SPEED_MM_YR = 0.01
MIN_OLDEST_AGE_MYR = 1.0
MAX_AGE_MYR = 400.0
DRAG_RANGE_PA_S_M = (1e12, 1e18)
MAX_SLAB_FRACTION = 1.5


def motion_warnings(plates, omega, radius_m, source=None, xyz=None, vertex_plate=None) -> list:
    """Warnings for observed Euler vectors whose speeds say a unit is wrong.

    A plate's fastest point is on its outline (a great circle 90 degrees from the pole
    that crosses the plate leaves it there), so with the outlines' vertices the speed
    checked is the fastest vertex's, ``R |w x r|``; without them, the bound ``R |w|``.

    Parameters
    ----------
    plates : sequence of str
    omega : array_like, shape (P, 3)
        rad/s, as read.
    radius_m : float
    source : str, optional
        The motions' file.
    xyz : array_like, shape (V, 3), optional
        The plates' outline vertices (unit vectors).
    vertex_plate : array_like of int, shape (V,), optional
        The plate of each vertex.

    Returns
    -------
    list of str

    Examples
    --------
    Rates written in rad/s where deg/Myr are read (1 deg/Myr = 5.5e-16 rad/s):

    >>> from torque.euler import RAD_S_PER_DEG_MYR
    >>> w = np.array([[0.0, 0.0, 1.0], [0.0, 0.5, 0.0]]) * RAD_S_PER_DEG_MYR ** 2
    >>> motion_warnings(["A", "B"], w, 6.371e6, "m.csv")[0][:60]
    'm.csv: every plate moves below 0.01 mm/yr (the fastest, A, a'
    """
    from ..euler import M_S_TO_MM_YR
    omega = np.asarray(omega, float)
    if xyz is None:
        speed = radius_m * np.linalg.norm(omega, axis=1) * M_S_TO_MM_YR
    else:
        vertex_plate = np.asarray(vertex_plate)
        v = np.linalg.norm(np.cross(omega[vertex_plate], np.asarray(xyz, float)), axis=1)
        speed = np.zeros(len(omega))
        np.maximum.at(speed, vertex_plate, v * radius_m * M_S_TO_MM_YR)
    where = f"{source}: " if source else ""
    out = []
    if len(speed) and speed.max() > MAX_SPEED_MM_YR:
        fast = [p for p, v in zip(plates, speed) if v > MAX_SPEED_MM_YR]
        out.append(f"{where}{len(fast)} plate(s) move at up to {speed.max():.3g} mm/yr "
                   f"({', '.join(fast[:3])}{' ...' if len(fast) > 3 else ''}), faster than "
                   f"any plate on Earth ({MAX_SPEED_MM_YR:g} mm/yr allowed): rates are read "
                   "in deg/Myr; were they written in deg/yr, or in another column?")
    if len(speed) and 0 < speed.max() < MIN_SPEED_MM_YR:
        i = int(np.argmax(speed))
        out.append(f"{where}every plate moves below {MIN_SPEED_MM_YR:g} mm/yr (the fastest, "
                   f"{plates[i]}, at {speed[i]:.3g} mm/yr): rates are read in deg/Myr; were "
                   "they written in rad/s (1 deg/Myr = 5.5e-16 rad/s) or rad/yr?")
    return out


def age_warnings(age_myr, source=None) -> list:
    """Warnings for a sea-floor age grid whose oldest age says a unit is wrong.

    Parameters
    ----------
    age_myr : array_like
        The grid's ages as read (Myr; NaN off the ocean).
    source : str, optional

    Returns
    -------
    list of str

    Examples
    --------
    >>> age_warnings(np.array([0.0, 1.8e-4, np.nan]), "ages.nc")[0][:52]
    'ages.nc: the oldest sea floor is 0.00018 Myr old: ag'
    """
    a = np.asarray(age_myr, float)
    finite = a[np.isfinite(a)]
    if not finite.size:
        return []
    oldest = float(finite.max())
    where = f"{source}: " if source else ""
    if oldest < MIN_OLDEST_AGE_MYR:
        return [f"{where}the oldest sea floor is {oldest:.3g} Myr old: ages are read in Myr; "
                "were they written in Gyr, or divided once too often (years / 1e6 / 1e6)?"]
    if oldest > MAX_AGE_MYR:
        return [f"{where}sea floor up to {oldest:.4g} Myr old, older than any on Earth (about "
                f"200 Myr; {MAX_AGE_MYR:g} allowed): ages are read in Myr; were they written "
                "in kyr or years?"]
    return []


def coefficient_warnings(system, values, source=None) -> list:
    """Warnings for fitted coefficients outside the physically plausible range.

    Parameters
    ----------
    system : System
    values : array_like, shape (K,)
        The fitted coefficients.
    source : str, optional
        The hypothesis file.

    Returns
    -------
    list of str
    """
    where = f"{source}: " if source else ""
    out = []
    lo, hi = DRAG_RANGE_PA_S_M
    for label, kind, unit, free, v in zip(system.labels, system.kinds, system.units,
                                          system.free, values):
        if not free or not np.isfinite(v):
            continue
        if unit == "Pa s/m" and v > 0 and not lo <= v <= hi:
            out.append(f"{where}{label} = {v:.3g} Pa s/m lies outside the plausible basal "
                       f"drag range {lo:g}-{hi:g} Pa s/m (an asthenosphere's viscosity over "
                       "its thickness): check the units of the motions (deg/Myr) and of the "
                       "ages (Myr)")
        elif kind == "slab" and unit == "dimensionless" and v > MAX_SLAB_FRACTION:
            out.append(f"{where}{label} = {v:.3g}: more than the slab's whole negative "
                       f"buoyancy ({MAX_SLAB_FRACTION:g} allowed); check the units of the "
                       "motions and ages, or the slab's settings")
    return out


def input_warnings(inputs, motions) -> list:
    """The guards of a world's age grid (when it names one) and of observed motions.

    Parameters
    ----------
    inputs : Inputs
    motions : Motions or None

    Returns
    -------
    list of str
    """
    from ..errors import InputError
    out = []
    world = inputs.world
    if motions is not None:
        g = world.geometry
        try:
            omega = motions.for_world(world)
        except InputError:                  # other plates: the commands say so themselves
            omega = None
        if omega is not None:
            counts = np.diff(g.ring_start)
            out += motion_warnings(list(world.plate_names), omega, world.radius_m,
                                   motions.source, g.xyz, np.repeat(g.ring_plate, counts))
    if inputs.world.paths.get("ages") is not None and inputs.ages is not None:
        out += age_warnings(inputs.ages.age_myr, inputs.world.paths["ages"])
    return out

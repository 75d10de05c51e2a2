"""Motions CSV files: one Euler vector per plate (``plate,lat,lon,rate``), with optional
covariance columns ``cov_xx ... cov_zz`` in (deg/Myr)^2."""

from __future__ import annotations

import csv

import numpy as np

from ..errors import InputError
from ..euler import COV_COLUMNS, RAD_S_PER_DEG_MYR, Motions
from .files import atomic_write
from .tables import read_table

__all__ = ["read_motions", "write_motions", "COVARIANCE_COLUMNS", "AXES",
           "read_covariance", "write_covariance"]


def read_motions(path) -> Motions:
    """Read a motions CSV.

    Parameters
    ----------
    path : str or Path
        Header ``plate,lat,lon,rate``: pole latitude and longitude in degrees, rate in
        deg/Myr (counter-clockwise seen from above the pole). Rows starting with ``#`` are
        skipped. Extra columns are kept in ``Motions.extra``; if all of ``cov_xx, cov_xy,
        cov_xz, cov_yy, cov_yz, cov_zz`` are present they are read as the covariance of the
        Cartesian Euler vector in (deg/Myr)^2.

    Returns
    -------
    Motions
        Angular velocities in rad/s (covariance in (rad/s)^2).

    Raises
    ------
    InputError
        Naming the file, the line and the plate: a missing column, a value that is not a
        finite number or is out of range, a plate given twice, or a covariance that is not
        positive semi-definite.

    Examples
    --------
    >>> m = read_motions("polygons_demo/motions.csv")
    >>> m
    Motions(14 plates, with covariance, from 'polygons_demo/motions.csv')
    >>> lat, lon, rate = m.poles                       # degrees and deg/Myr, rate >= 0
    >>> bool((rate >= 0).all()), m.omega.shape         # rad/s inside
    (True, (14, 3))
    """
    table = read_table(path, ("plate", "lat", "lon", "rate"), comments=True,
                       empty="the file is empty; expected a header plate,lat,lon,rate",
                       hint="the header must name plate,lat,lon,rate")
    path = table.path
    width = len(table.header)
    plates = table.text("plate")
    for i, r in enumerate(table.rows):
        if len(r) < width:
            raise InputError(f"row has {len(r)} fields, the header {width}", file=path,
                             where=f"line {table.line(i)}")
        if not plates[i]:
            raise InputError("empty plate name", file=path, where=f"line {table.line(i)}")

    def where(i):
        return f"line {table.line(i)} (plate {plates[i]!r})"

    vals = {}
    for key in ("lat", "lon", "rate"):
        v = table.numbers(key, where=where)
        bad = np.nonzero(~np.isfinite(v))[0]
        if len(bad):
            raise InputError(f"{key} is not finite", file=path, where=where(int(bad[0])))
        vals[key] = v
    lat, lon = vals["lat"], vals["lon"]
    for i in range(len(plates)):
        if not -90.0 <= lat[i] <= 90.0:
            raise InputError(f"pole latitude {lat[i]:g} is out of [-90, 90]", file=path,
                             where=where(i))
        if not -360.0 <= lon[i] <= 360.0:
            raise InputError(f"pole longitude {lon[i]:g} is out of [-360, 360]", file=path,
                             where=where(i))
        if plates[i] in plates[:i]:
            raise InputError(f"plate {plates[i]!r} has a second row", file=path,
                             where=f"line {table.line(i)}")
    if not plates:
        raise InputError("no rows after the header", file=path)
    extra = {h: table.text(h) for h in table.header if h not in ("plate", "lat", "lon", "rate")}
    cov = None
    if table.has(*COV_COLUMNS):
        c = np.stack([table.numbers(k, where=where, message="covariance columns must be "
                                    "numbers") for k in COV_COLUMNS], axis=1)
        bad = np.nonzero(~np.all(np.isfinite(c), axis=1))[0]
        if len(bad):
            raise InputError("a covariance column is not finite (NaN or infinite)",
                             file=path, where=where(int(bad[0])),
                             hint="give 0 for an exactly known component")
        cov = _covariance_matrices(c * RAD_S_PER_DEG_MYR ** 2, plates, path)
    return Motions.from_poles(plates, lat, lon, vals["rate"], cov=cov, extra=extra,
                              source=str(path))


def _covariance_matrices(c, plates, path) -> np.ndarray:
    """(P, 3, 3) symmetric matrices from the six columns, checked positive semi-definite."""
    cov = np.stack([c[:, [0, 1, 2]], c[:, [1, 3, 4]], c[:, [2, 4, 5]]], axis=1)
    size = np.abs(cov).max(axis=(1, 2))
    low = np.linalg.eigvalsh(cov)[:, 0]
    bad = np.nonzero(low < -1e-12 * np.maximum(size, 1e-300))[0]
    if len(bad):
        i = int(bad[0])
        raise InputError(
            "the covariance matrix is not positive semi-definite (its smallest "
            f"eigenvalue is {low[i] / RAD_S_PER_DEG_MYR ** 2:.3g} (deg/Myr)^2)",
            file=path, where=f"plate {plates[i]!r}",
            hint="check the cov_* columns: |cov_xy| <= sqrt(cov_xx cov_yy) and so on")
    return cov


def write_motions(path, motions: Motions, plates=None) -> None:
    """Write a motions CSV, atomically.

    Parameters
    ----------
    path : str or Path
    motions : Motions
    plates : sequence of str, optional
        Orders and selects the rows (default: the order of ``motions``).

    Notes
    -----
    Rates are written >= 0 (the pole flipped to its antipode where needed), every number
    to 15 significant digits; the covariance, if known, in the ``cov_*`` columns in
    (deg/Myr)^2.
    """
    idx = motions.index()
    names = list(plates) if plates is not None else list(motions.plates)
    lat, lon, rate = motions.poles
    header = ["plate", "lat", "lon", "rate"]
    if motions.cov is not None:
        header += list(COV_COLUMNS)
    with atomic_write(path, newline="") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        for p in names:
            i = idx[p]
            row = [p, f"{lat[i]:.15g}", f"{lon[i]:.15g}", f"{rate[i]:.15g}"]
            if motions.cov is not None:
                c = motions.cov[i] / RAD_S_PER_DEG_MYR ** 2
                row += [f"{c[a, b]:.15g}" for a, b in ((0, 0), (0, 1), (0, 2), (1, 1),
                                                      (1, 2), (2, 2))]
            w.writerow(row)


#: The columns of a covariance file: one entry of the 3P x 3P covariance of the Cartesian
#: Euler vectors per row, in (deg/Myr)^2.
COVARIANCE_COLUMNS = ("plate_1", "axis_1", "plate_2", "axis_2", "cov")
AXES = ("x", "y", "z")


def read_covariance(path, plates) -> np.ndarray:
    """Read a full covariance of Euler vectors, correlations between plates included.

    Parameters
    ----------
    path : str or Path
        A CSV with header ``plate_1,axis_1,plate_2,axis_2,cov``: one entry per row, axes
        ``x``, ``y`` or ``z`` (Earth-centred Cartesian), ``cov`` in (deg/Myr)^2. Entries
        not given are 0; the matrix is symmetric, so each pair is given once (both orders
        are accepted if they agree). Rows starting with ``#`` are skipped.
    plates : sequence of str
        The plates, in the order wanted (a world's plates): every one needs its three
        variances, and every plate named must be one of them.

    Returns
    -------
    ndarray, shape (3P, 3P)
        (rad/s)^2, rows and columns ordered plate by plate, x, y, z.

    Raises
    ------
    InputError
        Naming the file and the line: an unknown plate or axis, a number that is not
        finite, a pair given twice with different values, a plate without its variances,
        or a matrix that is not positive definite (naming the plates involved).

    Examples
    --------
    >>> import tempfile, os
    >>> path = os.path.join(tempfile.mkdtemp(), "cov.csv")
    >>> rows = ["plate_1,axis_1,plate_2,axis_2,cov"]
    >>> rows += [f"{p},{a},{p},{a},1e-4" for p in "AB" for a in "xyz"]
    >>> rows += ["A,x,B,x,5e-5"]
    >>> _ = open(path, "w").write("\\n".join(rows) + "\\n")
    >>> C = read_covariance(path, ["A", "B"]) / RAD_S_PER_DEG_MYR ** 2
    >>> C.shape, float(C[0, 3]), float(C[3, 0])
    ((6, 6), 5e-05, 5e-05)
    """
    table = read_table(path, COVARIANCE_COLUMNS, comments=True,
                       empty="the file is empty; expected a header "
                       + ",".join(COVARIANCE_COLUMNS),
                       hint="the header must name " + ",".join(COVARIANCE_COLUMNS))
    path = table.path
    index = {p: i for i, p in enumerate(plates)}
    P = len(plates)
    values = table.numbers("cov", where=lambda i: f"line {table.line(i)}")
    C = np.zeros((3 * P, 3 * P))
    given = np.zeros((3 * P, 3 * P), bool)
    columns = {k: (table.text(f"plate_{k}"), table.text(f"axis_{k}")) for k in ("1", "2")}
    for i in range(len(table)):
        where = f"line {table.line(i)}"
        ij = []
        for k in ("1", "2"):
            plate = columns[k][0][i]
            axis = columns[k][1][i].lower()
            if plate not in index:
                raise InputError(f"plate {plate!r} is not a plate of the world", file=path,
                                 where=where, hint="use the world's plate names")
            if axis not in AXES:
                raise InputError(f"axis_{k} must be x, y or z, got {axis!r}", file=path,
                                 where=where)
            ij.append(3 * index[plate] + AXES.index(axis))
        v = values[i]
        if not np.isfinite(v):
            raise InputError("cov is not finite", file=path, where=where)
        a, b = ij
        if given[a, b] and C[a, b] != v:
            raise InputError(f"this entry was given before with another value "
                             f"({C[a, b] / RAD_S_PER_DEG_MYR ** 2:g})", file=path, where=where,
                             hint="give each pair once")
        C[a, b] = C[b, a] = v * RAD_S_PER_DEG_MYR ** 2
        given[a, b] = given[b, a] = True
    missing = [plates[d // 3] for d in range(3 * P) if not given[d, d] or C[d, d] <= 0]
    if missing:
        raise InputError(f"plate {missing[0]!r} has no positive variance on every axis",
                         file=path, hint="give its x,x y,y and z,z entries (every plate of "
                         "the world needs them)")
    try:
        np.linalg.cholesky(C)
    except np.linalg.LinAlgError:
        low = np.linalg.eigh(C)
        worst = np.abs(low[1][:, 0]).reshape(P, 3).max(axis=1)
        involved = [plates[p] for p in np.argsort(-worst)[:3]]
        raise InputError(
            "the covariance is not positive definite (smallest eigenvalue "
            f"{low[0][0] / RAD_S_PER_DEG_MYR ** 2:.3g} (deg/Myr)^2, mostly on plates "
            f"{', '.join(map(repr, involved))})", file=path,
            hint="correlations must satisfy |cov_ab| < sqrt(cov_aa cov_bb), jointly") from None
    return C


def write_covariance(path, cov, plates) -> None:
    """Write a full covariance (see :func:`read_covariance`), atomically; zeros are left out.

    Parameters
    ----------
    path : str or Path
    cov : ndarray, shape (3P, 3P)
        (rad/s)^2.
    plates : sequence of str
    """
    C = np.asarray(cov, float) / RAD_S_PER_DEG_MYR ** 2
    with atomic_write(path, newline="") as fh:
        w = csv.writer(fh)
        w.writerow(COVARIANCE_COLUMNS)
        for a, b in zip(*np.triu_indices(len(C))):
            if C[a, b] != 0:
                w.writerow([plates[a // 3], AXES[a % 3], plates[b // 3], AXES[b % 3],
                            f"{C[a, b]:.15g}"])

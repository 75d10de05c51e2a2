"""What figures are built of: plate fills from a raster of plate indices, gridded fields as
one image, boundaries and subduction teeth projected once per world and projection, the
legend, and saving.
"""

from __future__ import annotations

import functools
import weakref

import numpy as np

from ... import sphere
from .style import _MEASURED, DPI, KIND_STYLE, _plt, label_plates, plate_colours

__all__ = ["draw_plates", "draw_boundaries"]


def _raster(world, step=0.5):
    lon = np.arange(-180 + step / 2, 180, step)
    lat = np.arange(-90 + step / 2, 90, step)
    return lon, lat, world.geometry.locator.locate_grid(lon, lat)


def _grid_image(ax, step, values, **imshow):
    """A field given on the cell-centred global grid of ``step`` degrees, drawn as one
    image in the map's own coordinates (what a mesh of the cells shows, each pixel taking
    the cell it falls in, without projecting 260,000 cells at each draw).

    Parameters
    ----------
    ax : cartopy GeoAxes
    step : float
        Degrees; ``values`` has shape ``(180 / step, 360 / step)``, south to north.
    values : ndarray
    **imshow
        Passed to ``imshow`` (cmap, vmin, vmax, alpha).

    Returns
    -------
    matplotlib AxesImage
    """
    proj = ax.projection
    fig = ax.figure
    # about one image pixel per screen pixel (the cells are several pixels wide), on a grid
    # that maps of about one size share
    nx = max(400, 400 * round(ax.get_position().width * fig.get_figwidth() * DPI / 400))
    lon, lat, inside = _pixel_lonlat(proj, nx)
    rows, cols = values.shape
    i = np.clip(((lat + 90.0) / step).astype(np.intp, casting="unsafe"), 0, rows - 1)
    j = np.clip(((lon + 180.0) / step).astype(np.intp, casting="unsafe"), 0, cols - 1)
    img = np.ma.masked_array(values[i, j], mask=~inside)
    (x0, x1), (y0, y1) = proj.x_limits, proj.y_limits
    return ax.imshow(img, extent=(x0, x1, y0, y1), origin="lower", transform=proj,
                     interpolation="nearest", **imshow)


@functools.lru_cache(maxsize=4)
def _pixel_lonlat(projection, nx):
    """Longitude and latitude of the centres of an ``nx``-wide pixel grid over a
    projection's extent (float32: they only pick grid cells; about 6 MB for a 1,200-pixel
    map), and which pixels lie on the globe (a hemisphere's disc; outside an outline the
    axes' clip to the map hides them)."""
    import cartopy.crs as ccrs
    (x0, x1), (y0, y1) = projection.x_limits, projection.y_limits
    ny = max(1, round(nx * (y1 - y0) / (x1 - x0)))
    X, Y = np.meshgrid(x0 + (np.arange(nx) + 0.5) * (x1 - x0) / nx,
                       y0 + (np.arange(ny) + 0.5) * (y1 - y0) / ny)
    ll = ccrs.PlateCarree().transform_points(projection, X.ravel(), Y.ravel())
    lon, lat = ll[:, 0].reshape(ny, nx), ll[:, 1].reshape(ny, nx)
    inside = np.isfinite(lon) & np.isfinite(lat)
    return (np.where(inside, lon, 0.0).astype(np.float32),
            np.where(inside, lat, 0.0).astype(np.float32), inside)


def draw_plates(ax, world, continents=None, labels=True):
    """Fill plates, outline continents, draw boundaries by kind, label plates.

    Parameters
    ----------
    ax : cartopy GeoAxes
    world : World
    continents : Continents, optional
    labels : bool
        Write plate names at their centroids.
    """
    import cartopy.crs as ccrs
    from matplotlib.colors import ListedColormap
    lon, lat, idx = _raster(world)
    cols = plate_colours(world)
    _grid_image(ax, 0.5, idx, cmap=ListedColormap(cols), vmin=-0.5, vmax=len(cols) - 0.5)
    if continents is not None and hasattr(continents, "ring_start"):
        rs = continents.ring_start
        for r in range(len(rs) - 1):
            ring = continents.xyz[rs[r]:rs[r + 1]]
            lo, la = sphere.xyz_to_lonlat(np.r_[ring, ring[:1]])
            ax.fill(lo, la, transform=ccrs.Geodetic(), facecolor="none", edgecolor="#6B5B45",
                    hatch="...", lw=0.8)
    draw_boundaries(ax, world)
    if labels:
        label_plates(ax, world)


def _line_lonlat(xyz, step_rad=np.radians(1.0)):
    pa, pb, _ = sphere.densify_arcs(xyz[:-1], xyz[1:], step_rad)
    pts = np.r_[pa, pb[-1:]]
    return sphere.xyz_to_lonlat(pts)


def draw_boundaries(ax, world, teeth_spacing_km=700.0):
    """Draw boundaries by kind, with teeth on the overriding side of subduction zones.

    Each kind's lines are projected once, together (cartopy cuts them at the map's edge
    and, on a hemisphere, at the horizon), and drawn as one collection in the map's own
    coordinates: matplotlib then has nothing left to project when the figure is drawn.

    Parameters
    ----------
    ax : cartopy GeoAxes
    world : World
    teeth_spacing_km : float
    """
    from matplotlib.collections import LineCollection
    for kind, parts in _projected_boundaries(world, ax.projection).items():
        st = KIND_STYLE.get(kind, KIND_STYLE["unclassified"])
        ax.add_collection(LineCollection(parts, colors=st["color"], linewidths=st["lw"],
                                         linestyles=[st["ls"]], label=kind, zorder=3,
                                         transform=ax.transData), autolim=False)
    subducting = [b for b in world.boundaries if b.kind == "subduction" and b.subducting]
    if subducting:
        _teeth(ax, world, subducting, teeth_spacing_km,
               KIND_STYLE["subduction"]["color"])


#: Boundary lines projected, per world and projection (maps of one world share them).
_BOUNDARIES = weakref.WeakKeyDictionary()


def _projected_boundaries(world, projection) -> dict:
    """``{kind: [(n, 2) arrays]}``: each kind's lines in the projection's coordinates, cut
    where the map ends."""
    done = _BOUNDARIES.setdefault(world, {})
    if projection not in done:
        by_kind = {}
        for b in world.boundaries:
            by_kind.setdefault(b.kind, []).append(np.column_stack(_line_lonlat(b.xyz)))
        done[projection] = {kind: _project_lines(projection, lines)
                            for kind, lines in by_kind.items()}
    return done[projection]


def _project_lines(projection, lines) -> list:
    """Lines of (lon, lat) points, joined by great circles, in a projection's coordinates:
    one cartopy projection of them all, cut at the map's edge (and a hemisphere's horizon);
    a list of (n, 2) arrays."""
    import cartopy.crs as ccrs
    import shapely
    projected = projection.project_geometry(shapely.MultiLineString(lines), ccrs.Geodetic())
    return [np.asarray(g.coords) for g in getattr(projected, "geoms", [projected])
            if not g.is_empty]


def tooth_sites(xyz, spacing_rad):
    """Where a line's teeth stand: every ``spacing_rad`` of arc along the whole line (half a
    spacing from its start), not once per digitised arc, so that a line digitised every few
    kilometres does not merge its teeth into a band; a line shorter than one spacing gets
    one tooth at its middle.

    Parameters
    ----------
    xyz : ndarray, shape (n, 3)
        The line's vertices (unit vectors).
    spacing_rad : float

    Returns
    -------
    points : ndarray, shape (N, 3)
        Unit vectors on the line.
    normals : ndarray, shape (N, 3)
        The left-hand normal of the line there (:func:`torque.sphere.arc_pole`).

    Examples
    --------
    A quarter of the equator digitised every degree, teeth every 30 degrees:

    >>> lon = np.radians(np.arange(0, 91))
    >>> xyz = np.c_[np.cos(lon), np.sin(lon), np.zeros_like(lon)]
    >>> p, n = tooth_sites(xyz, np.radians(30))
    >>> np.round(np.degrees(np.arctan2(p[:, 1], p[:, 0])), 6).tolist()
    [15.0, 45.0, 75.0]
    """
    a, c = xyz[:-1], xyz[1:]
    n, theta = sphere.arc_pole(a, c)
    s = np.r_[0.0, np.cumsum(theta)]
    total = s[-1]
    if not total > 0:
        return np.empty((0, 3)), np.empty((0, 3))
    at = np.arange(spacing_rad / 2, total, spacing_rad) if total > spacing_rad else \
        np.array([total / 2])
    k = np.clip(np.searchsorted(s, at, side="right") - 1, 0, len(theta) - 1)
    th = theta[k]
    f = np.where(th > 0, (at - s[k]) / np.where(th > 0, th, 1.0), 0.0)
    # along the great-circle arc k, a fraction f of the way (slerp)
    with np.errstate(invalid="ignore", divide="ignore"):
        wa = np.where(th > 0, np.sin((1 - f) * th) / np.sin(th), 1.0)
        wc = np.where(th > 0, np.sin(f * th) / np.sin(th), 0.0)
    points = sphere.normalize(wa[:, None] * a[k] + wc[:, None] * c[k])
    return points, n[k]


def _teeth(ax, world, lines, spacing_km, colour):
    """Triangles along subduction lines, pointing into the overriding plate: one
    collection, projected once."""
    import cartopy.crs as ccrs
    from matplotlib.collections import PolyCollection
    R = world.radius_m
    h, w = 260e3 / R, 150e3 / R
    triangles = []
    for b in lines:
        mid, n = tooth_sites(b.xyz, spacing_km * 1e3 / R)
        if not len(mid):
            continue
        t = np.cross(n, mid)
        side = 1.0 if b.subducting == b.right else -1.0      # overriding plate's side of n
        apex = sphere.normalize(mid + side * h * n)
        triangles.append(np.stack([sphere.normalize(mid - w * t), apex,
                                   sphere.normalize(mid + w * t)], axis=1))   # (N, 3, 3)
    if not triangles:
        return
    lo, la = sphere.xyz_to_lonlat(np.concatenate(triangles))                 # (N, 3)
    xy = ax.projection.transform_points(ccrs.PlateCarree(), lo.ravel(), la.ravel())
    xy = xy[:, :2].reshape(*lo.shape, 2)
    # a tooth across the antimeridian, or past a hemisphere's horizon, is skipped
    keep = (np.ptp(lo, axis=1) <= 180) & np.isfinite(xy).all(axis=(1, 2))
    if keep.any():
        ax.add_collection(PolyCollection(xy[keep], transform=ax.transData, facecolor=colour,
                                         edgecolor="none", linewidth=0, zorder=4),
                          autolim=False)


def _legend(ax, extra=()):
    # below the map, where it hides no plate or label
    handles, labels = ax.get_legend_handles_labels()
    if handles:
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.01), ncol=min(len(handles), 7),
                  fontsize=8, frameon=False)


def _save(fig, path):
    plt = _plt()
    from ...io.files import atomic_path
    # the tight box of what is drawn, measured here: savefig's own "tight" would first draw
    # the whole figure once more without output to measure it
    renderer = fig.canvas.get_renderer()
    if fig in _MEASURED:
        from matplotlib.transforms import Bbox
        drawn, text = _MEASURED.pop(fig)
        box = Bbox.union([drawn, text.get_window_extent(renderer).transformed(
            fig.dpi_scale_trans.inverted())])
    else:
        box = fig.get_tightbbox(renderer)
    box = box.padded(plt.rcParams["savefig.pad_inches"])
    with atomic_path(path) as tmp:
        fmt = str(path).rsplit(".", 1)[-1]
        # PNG at zlib level 3: a third faster to write than the default 6, 6 % larger
        fig.savefig(tmp, dpi=DPI, bbox_inches=box, format=fmt,
                    **({"pil_kwargs": {"compress_level": 3}} if fmt == "png" else {}))
    plt.close(fig)
    return path

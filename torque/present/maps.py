"""Maps and charts of plates, boundaries, motions, poles, misfits and torques.

Drawn with cartopy (Equal Earth projection) and matplotlib, from the world's own geometry:
no coastlines or other data are loaded, so nothing is downloaded. Plates are filled from a
0.5 degree raster of plate indices (exact point location), which is right at the poles and
across the antimeridian; lines are drawn as geodesics.

The palette is this project's own: eight muted colours that stay apart for the common
forms of colour-vision deficiency (they differ in lightness as well as hue), assigned so
that neighbouring plates differ. Boundary kinds have their own colours and line styles, and
subduction zones carry teeth on the overriding plate's side, as geologists draw them.
"""

from __future__ import annotations

import functools
import textwrap
import weakref
from dataclasses import dataclass

import numpy as np

from .. import sphere
from ..errors import InputError
from ..euler import pole_to_vector, velocity_en

PLATE_COLOURS = ["#9DB8D9", "#E8C77D", "#A9CFA3", "#D9A7BE", "#C9C1E3", "#E6B08F",
                 "#A6D4D1", "#CFCF9C"]
KIND_STYLE = {
    "ridge": {"color": "#B3261E", "lw": 1.8, "ls": "-"},
    "subduction": {"color": "#1B2F6B", "lw": 1.6, "ls": "-"},
    "transform": {"color": "#2F6B3A", "lw": 1.4, "ls": (0, (5, 2))},
    "collision": {"color": "#6A2C70", "lw": 2.4, "ls": "-"},
    "unclassified": {"color": "#555555", "lw": 1.0, "ls": ":"},
}
OBSERVED_COLOUR = "#1A1A1A"
PREDICTED_COLOUR = "#C4501B"
#: Force terms get colours of their own, saturated where the plate fills are muted, so that
#: a term is never mistaken for a plate (the project's own choice; they differ in
#: lightness as well as hue).
FORCE_COLOURS = ["#2B4C9B", "#E07B1F", "#2E8B57", "#B0306A", "#6A4C9C", "#8A6A1F",
                 "#1F8FA8", "#C8323C"]
#: Colour scales of magnitudes are clipped at this percentile, so that a few fast
#: microplates do not wash out the rest (said on the colour bar).
CLIP_PERCENTILE = 98.0


def force_colours(labels) -> dict:
    """A colour per force term, in the order given (see :data:`FORCE_COLOURS`).

    Parameters
    ----------
    labels : sequence of str

    Returns
    -------
    dict
        ``{label: colour}``.
    """
    return {l: FORCE_COLOURS[k % len(FORCE_COLOURS)] for k, l in enumerate(labels)}


#: Dots per inch of every figure, drawn and saved alike (text measured while laying a
#: figure out is measured once: matplotlib caches text extents per resolution).
DPI = 110


def _plt():
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    return plt


def figure_size(n_plates: int) -> tuple:
    """Width and height (inches) of a world map for ``n_plates`` plates: bigger for more
    plates, so that labels keep room.

    Parameters
    ----------
    n_plates : int

    Returns
    -------
    tuple of float
    """
    width = 11.0 if n_plates <= 20 else 14.0 if n_plates <= 45 else 17.0
    return width, width * 0.5


def label_size(n_plates: int) -> float:
    """Font size (points) of plate labels: smaller as plates get more.

    Parameters
    ----------
    n_plates : int

    Returns
    -------
    float
    """
    return 8.0 if n_plates <= 20 else 7.0 if n_plates <= 45 else 6.0


def _axes(title=None, n_plates=14):
    import cartopy.crs as ccrs
    plt = _plt()
    fig = plt.figure(figsize=figure_size(n_plates), dpi=DPI)
    ax = fig.add_subplot(1, 1, 1, projection=ccrs.EqualEarth())
    ax.set_global()
    if title:
        ax.set_title(title, fontsize=12)
    return fig, ax


def caption(fig, text: str) -> None:
    """The one-line caption every figure carries: what it shows, in which frame.

    Parameters
    ----------
    fig : matplotlib Figure
    text : str
    """
    for a in fig.axes:                      # the maps' aspect, before measuring
        a.apply_aspect()
    # below everything drawn (axes with their tick labels, legends, texts); the box is kept
    # for saving, which then measures only the caption
    renderer = fig.canvas.get_renderer()
    box = fig.get_tightbbox(renderer)                                  # inches
    t = fig.text(0.5, box.y0 / fig.get_figheight() - 0.02, text, ha="center", va="top",
                 fontsize=7.5, style="italic")
    # wider than the figure: broken into lines of about equal length, from one measure of
    # the whole (matplotlib's own wrapping measures the line again after every word)
    lines = int(np.ceil(t.get_window_extent(renderer).width / (0.98 * fig.bbox.width)))
    if lines > 1:
        t.set_text("\n".join(textwrap.wrap(text, int(np.ceil(len(text) / lines)) + 2)))
    _MEASURED[fig] = (box, t)


#: Figures with a caption: the tight box of what was drawn before it, and the caption.
_MEASURED = weakref.WeakKeyDictionary()


def place_labels(ax, lon, lat, names, fontsize=8.0, priority=None, obstacles=None):
    """Write labels at points so that no two overlap: each is tried at its point, then at
    growing offsets around it, and joined to its point by a leader line when moved.

    Greedy, in order of ``priority`` (largest first; default the order given): a label
    that finds no free place within the offsets tried stays at the last one, with its
    leader line.

    Parameters
    ----------
    ax : matplotlib or cartopy axes
    lon, lat : array_like, shape (n,)
        Degrees.
    names : sequence of str
    fontsize : float
    priority : array_like, shape (n,), optional
    obstacles : (lon, lat) of array_like, optional
        Points (markers) no label may cover; labels then start beside their point.

    Returns
    -------
    list of matplotlib Text
        The labels, in the order of ``names``.
    """
    import cartopy.crs as ccrs
    fig = ax.figure
    for a in fig.axes:                     # layout must be final for the extents
        a.apply_aspect()
    renderer = fig.canvas.get_renderer()
    lon, lat = np.asarray(lon, float), np.asarray(lat, float)
    xy = ax.projection.transform_points(ccrs.PlateCarree(), lon, lat)[:, :2]
    order = np.argsort(-np.asarray(priority)) if priority is not None else range(len(names))
    step = fontsize * 1.4                   # points
    offsets = [(0.0, 0.0)] + [(r * step * np.cos(a), r * step * np.sin(a))
                              for r in (1, 2, 3, 4) for a in np.radians(np.arange(0, 360, 45))]
    placed, texts = [], [None] * len(names)
    if obstacles is not None:
        pts = ax.projection.transform_points(ccrs.PlateCarree(), np.asarray(obstacles[0], float),
                                             np.asarray(obstacles[1], float))[:, :2]
        from matplotlib.transforms import Bbox
        half = fontsize * 0.6 * fig.dpi / 72          # pixels around each marker
        for x, y in ax.transData.transform(pts):
            placed.append(Bbox([[x - half, y - half], [x + half, y + half]]))
        offsets = offsets[1:]
    box = dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.7)
    for i in order:
        t = ax.annotate(names[i], xy=xy[i], xycoords="data", xytext=(0, 0),
                        textcoords="offset points", ha="center", va="center",
                        fontsize=fontsize, color="#222222", bbox=box, zorder=8,
                        annotation_clip=False)
        t.set_clip_on(False)                 # a label near the map's edge stays whole
        frame = ax.get_window_extent(renderer)
        for dx, dy in offsets:
            t.set_position((dx, dy))
            ext = t.get_window_extent(renderer).expanded(1.05, 1.1)
            inside = (frame.x0 <= ext.x0 and ext.x1 <= frame.x1 and frame.y0 <= ext.y0
                      and ext.y1 <= frame.y1)
            if inside and not any(ext.overlaps(b) for b in placed):
                break
        placed.append(t.get_window_extent(renderer))
        if (dx, dy) != (0.0, 0.0):
            ax.annotate("", xy=xy[i], xycoords="data", xytext=(dx, dy),
                        textcoords="offset points", zorder=7,
                        arrowprops=dict(arrowstyle="-", lw=0.6, color="#444444",
                                        shrinkA=0, shrinkB=0))
        texts[i] = t
    return texts


def label_plates(ax, world, fontsize=None):
    """Plate names at their centroids, placed so that they do not overlap (big plates
    first).

    Parameters
    ----------
    ax : cartopy GeoAxes
    world : World
    fontsize : float, optional
        Default :func:`label_size` of the number of plates.

    Returns
    -------
    list of matplotlib Text
    """
    area, first, _ = world.geometry.moments
    clon, clat = sphere.xyz_to_lonlat(first)
    size = fontsize or label_size(len(world.plates))
    return place_labels(ax, clon, clat, world.plate_names, size, priority=area)


def plate_colours(world) -> list:
    """A colour per plate such that plates sharing a boundary differ (greedy colouring).

    Parameters
    ----------
    world : World

    Returns
    -------
    list of str
        A colour per plate, in plate order.
    """
    n = len(world.plates)
    nbr = [set() for _ in range(n)]
    bs = world.boundary_set
    for i, j in zip(bs.left.tolist(), bs.right.tolist()):
        nbr[i].add(j)
        nbr[j].add(i)
    colour = [-1] * n
    for p in sorted(range(n), key=lambda p: -len(nbr[p])):
        used = {colour[q] for q in nbr[p]}
        colour[p] = next(c for c in range(len(PLATE_COLOURS) + n) if c not in used)
    return [PLATE_COLOURS[c % len(PLATE_COLOURS)] for c in colour]


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


def _teeth(ax, world, lines, spacing_km, colour):
    """Triangles along subduction lines, pointing into the overriding plate: one
    collection, projected once."""
    import cartopy.crs as ccrs
    from matplotlib.collections import PolyCollection
    R = world.radius_m
    h, w = 260e3 / R, 150e3 / R
    triangles = []
    for b in lines:
        pa, pb, _ = sphere.densify_arcs(b.xyz[:-1], b.xyz[1:], spacing_km * 1e3 / R)
        n, _ = sphere.arc_pole(pa, pb)
        mid = sphere.normalize(pa + pb)
        t = np.cross(n, mid)
        side = 1.0 if b.subducting == b.right else -1.0      # overriding plate's side of n
        apex = sphere.normalize(mid + side * h * n)
        triangles.append(np.stack([sphere.normalize(mid - w * t), apex,
                                   sphere.normalize(mid + w * t)], axis=1))   # (N, 3, 3)
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
    from ..io.files import atomic_path
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


# ----------------------------------------------------------------------------------------
def plates_map(world, path, continents=None):
    """Plates, continents and boundaries by kind.

    Parameters
    ----------
    world : World
    path : str or Path
        .png, .svg or .pdf.
    continents : Continents, optional

    Returns
    -------
    Path
        The file written.
    """
    fig, ax = _axes(f"{world.name}: plates and boundaries", len(world.plates))
    draw_plates(ax, world, continents)
    _legend(ax)
    caption(fig, "Plates (fills tell neighbours apart), continents hatched, boundaries by "
            "kind with teeth on the overriding side of subduction zones. Geographic "
            "coordinates, Equal Earth projection.")
    return _save(fig, path)


def _sample_points(n=400):
    k = np.arange(n) + 0.5
    z = 1 - 2 * k / n
    phi = np.pi * (1 + 5 ** 0.5) * k
    xyz = np.c_[np.sqrt(1 - z * z) * np.cos(phi), np.sqrt(1 - z * z) * np.sin(phi), z]
    return xyz


def velocity_map(world, path, omega_obs, omega_pred=None, continents=None,
                 frame: str | None = None):
    """Velocity arrows of observed (black) and predicted (orange) motions over the observed
    speed, with plate names, both in one frame.

    Parameters
    ----------
    world : World
    path : str or Path
    omega_obs : ndarray, shape (P, 3)
        rad/s.
    omega_pred : ndarray, shape (P, 3), optional
        rad/s, in the same frame as ``omega_obs``.
    continents : Continents, optional
    frame : str, optional
        The frame both are in, for the caption: ``"mantle"`` (the fit's mantle at rest),
        ``"motions"`` (the frame the observed motions were given in), or None (observed
        motions taken to be in the mantle's frame, no fit given).

    Returns
    -------
    Path
    """
    import cartopy.crs as ccrs

    fig, ax = _axes(f"{world.name}: plate velocities (mm/yr)", len(world.plates))
    # the observed speed as the background, its scale clipped at a stated percentile
    lon, lat, idx = _raster(world, 1.0)
    LON, LAT = np.meshgrid(lon, lat)
    grid_xyz = sphere.lonlat_to_xyz(LON, LAT).reshape(-1, 3)
    ge, gn = velocity_en(omega_obs[idx.ravel()], grid_xyz, world.radius_m)
    speed = np.hypot(ge, gn).reshape(idx.shape)                      # mm/yr
    top = float(np.percentile(speed, CLIP_PERCENTILE))
    m = _grid_image(ax, 1.0, speed, cmap="Greys", vmin=0, vmax=top, alpha=0.45)
    fig.colorbar(m, ax=ax, shrink=0.55, extend="max", pad=0.02,
                 label=f"observed speed, mm/yr (scale clipped at the {CLIP_PERCENTILE:g}th "
                       f"percentile, {top:.0f})")
    draw_boundaries(ax, world)
    xyz = _sample_points()
    lon, lat = sphere.xyz_to_lonlat(xyz)
    plate = world.locate_xyz(xyz)
    ve, vn = velocity_en(omega_obs[plate], xyz, world.radius_m)
    scale = 25 * max(np.percentile(np.hypot(ve, vn), 95), 1e-9)
    # predicted underneath and wider, observed on top and thin, so both stay visible
    for om, col, lab, width in ((omega_pred, PREDICTED_COLOUR, "predicted", 0.0045),
                                (omega_obs, OBSERVED_COLOUR, "observed", 0.0015)):
        if om is None:
            continue
        ve, vn = velocity_en(om[plate], xyz, world.radius_m)
        q = ax.quiver(lon, lat, ve, vn, transform=ccrs.PlateCarree(), color=col, scale=scale,
                      width=width, zorder=5, label=lab)
    ax.quiverkey(q, 0.86, 0.06, 50, "50 mm/yr", labelpos="E",
                 coordinates="axes", fontproperties={"size": 8})
    label_plates(ax, world)
    _legend(ax)
    where = {"mantle": "in the frame where the fitted mantle is at rest",
             "motions": "in the frame the observed motions were given in (predicted ones "
                        "carry the fit's mantle rotation)",
             None: "observed motions taken to be in the frame where the mantle is at rest "
                   "(no fit given to say otherwise)"}[frame]
    caption(fig, ("Arrows: observed and predicted motions, " if omega_pred is not None
                  else "Arrows: observed motions, ") + where + ". Grey: observed speed.")
    return _save(fig, path)


def _ellipse_lonlat(lat, lon, major_deg, minor_deg, azimuth_deg, n=72):
    from pyproj import Geod
    g = Geod(a=1.0, b=1.0)
    t = np.linspace(0, 2 * np.pi, n)
    a, b = np.radians(major_deg), np.radians(minor_deg)
    r = a * b / np.sqrt((b * np.cos(t)) ** 2 + (a * np.sin(t)) ** 2 + 1e-300)
    az = azimuth_deg + np.degrees(t)
    lo, la, _ = g.fwd(np.full(n, lon), np.full(n, lat), az, r)
    return lo, la


def poles_map(world, path, fit):
    """Observed and predicted Euler poles with their 95 % ellipses, on the globe and zoomed.

    The top panel shows every pole on the globe; below it, one small panel per plate,
    centred between its two poles in local azimuthal coordinates (degrees of arc east and
    north), shows both ellipses at a scale where they are visible however small. The
    predicted pole's ellipse is the prediction ellipse (coefficients and observations'
    covariance together: where the observed pole should lie if the model is right) where
    the fit has one, else the coefficients' alone; the observed pole's comes from the
    motions' covariance.

    Parameters
    ----------
    world : World
    path : str or Path
    fit : FitResult

    Returns
    -------
    Path
    """
    import cartopy.crs as ccrs
    from matplotlib.lines import Line2D
    plt = _plt()
    plates = list(fit.plates)
    predicted_key = ("prediction_ellipse" if any(p.get("prediction_ellipse") for p in plates)
                     else "pole_ellipse")
    ncol = min(7, max(len(plates), 1))
    nrow = -(-len(plates) // ncol)
    width, height = figure_size(len(plates))
    fig = plt.figure(figsize=(width, height + 1.6 * nrow), dpi=DPI)
    grid = fig.add_gridspec(1 + nrow, ncol, height_ratios=[6] + [1.6] * nrow, hspace=0.3,
                            wspace=0.35)
    ax = fig.add_subplot(grid[0, :], projection=ccrs.EqualEarth())
    ax.set_global()
    ax.set_title(f"{world.name}: Euler poles, observed and predicted, with 95 % ellipses",
                 fontsize=12)
    draw_plates(ax, world, labels=False)
    styles = ((predicted_key, "predicted", PREDICTED_COLOUR, "-"),
              ("observed_pole_ellipse", "observed", OBSERVED_COLOUR, "--"))
    from matplotlib.collections import LineCollection
    # markers, one artist per kind; ellipses over them (so that small ones still show as
    # rings), projected once, one collection per kind
    for which, marker in (("observed", dict(marker="o", mfc="white", mec=OBSERVED_COLOUR)),
                          ("predicted", dict(marker="^", color=PREDICTED_COLOUR))):
        ax.plot([p[which]["lon"] for p in plates], [p[which]["lat"] for p in plates],
                ls="", ms=6, transform=ccrs.PlateCarree(), zorder=6, **marker)
    for key, which, colour, style in styles:
        rings = [np.column_stack(_ellipse_lonlat(p[which]["lat"], p[which]["lon"],
                                                 e["major_deg"], e["minor_deg"],
                                                 e["azimuth_deg"]))
                 for p in plates for e in [p.get(key) or {}] if e.get("major_deg")]
        if rings:
            ax.add_collection(LineCollection(_project_lines(ax.projection, rings),
                                             colors=colour, linewidths=1.4,
                                             linestyles=[style], zorder=7,
                                             transform=ax.transData), autolim=False)
    markers = ([p[w]["lon"] for p in plates for w in ("observed", "predicted")],
               [p[w]["lat"] for p in plates for w in ("observed", "predicted")])
    place_labels(ax, [p["predicted"]["lon"] for p in plates],
                 [p["predicted"]["lat"] for p in plates], [p["plate"] for p in plates],
                 label_size(len(plates)) - 1, obstacles=markers)
    for i, p in enumerate(plates):
        _pole_zoom(fig.add_subplot(grid[1 + i // ncol, i % ncol]), p, styles)
    what = ("prediction: coefficients and observations" if predicted_key == "prediction_ellipse"
            else "coefficients")
    ax.legend(handles=[
        Line2D([], [], marker="o", ls="", mfc="white", mec=OBSERVED_COLOUR,
               label="observed pole"),
        Line2D([], [], color=OBSERVED_COLOUR, ls="--", label="its 95 % ellipse (covariance)"),
        Line2D([], [], marker="^", ls="", color=PREDICTED_COLOUR, label="predicted pole"),
        Line2D([], [], color=PREDICTED_COLOUR, label=f"its 95 % ellipse ({what})")],
        loc="upper center", bbox_to_anchor=(0.5, -0.01), ncol=4, fontsize=7, frameon=False)
    caption(fig, "Observed and predicted Euler poles in the frame where the mantle is at "
            "rest; below, each plate's poles zoomed (north up; corner: the box's half-width "
            "in degrees).")
    return _save(fig, path)


def _pole_zoom(ax, plate, styles):
    """One plate's observed and predicted poles and ellipses, in local coordinates."""
    from pyproj import Geod
    g = Geod(a=1.0, b=1.0)
    o, q = plate["observed"], plate["predicted"]
    # the midpoint of the two poles, as the centre of the local azimuthal frame
    mid = sphere.lonlat_to_xyz(np.array([o["lon"], q["lon"]]), np.array([o["lat"], q["lat"]]))
    m = mid.sum(0)
    m = m / np.linalg.norm(m) if np.linalg.norm(m) > 1e-9 else mid[0]
    lon_c, lat_c = sphere.xyz_to_lonlat(m)
    clon, clat = float(lon_c), float(lat_c)

    def local(lon, lat):
        lon, lat = np.atleast_1d(lon), np.atleast_1d(lat)
        az, _, dist = g.inv(np.full(len(lon), clon), np.full(len(lon), clat), lon, lat)
        d = np.degrees(dist)
        return d * np.sin(np.radians(az)), d * np.cos(np.radians(az))
    extent = 0.0
    for key, which, colour, style in styles:
        at = plate[which]
        x, y = local(at["lon"], at["lat"])
        marker = dict(marker="^", color=colour) if which == "predicted" else \
            dict(marker="o", mfc="white", mec=colour)
        ax.plot(x, y, ls="", ms=4, **marker)
        extent = max(extent, float(np.hypot(x, y).max()))
        e = plate.get(key) or {}
        if e.get("major_deg"):
            ex, ey = local(*_ellipse_lonlat(at["lat"], at["lon"], e["major_deg"],
                                            e["minor_deg"], e["azimuth_deg"]))
            ax.plot(ex, ey, color=colour, lw=1.0, ls=style)
            extent = max(extent, float(np.hypot(ex, ey).max()))
    extent = 1.15 * extent or 1.0
    ax.set_xlim(-extent, extent)
    ax.set_ylim(-extent, extent)
    ax.set_aspect("equal")
    ax.set_title(plate["plate"], fontsize=7, pad=2)
    # the box's half-width instead of tick labels on every panel; a cross at the midpoint
    ax.set_xticks([])
    ax.set_yticks([])
    ax.plot([-0.06 * extent, 0.06 * extent], [0, 0], color="#888888", lw=0.6)
    ax.plot([0, 0], [-0.06 * extent, 0.06 * extent], color="#888888", lw=0.6)
    ax.text(0.04, 0.04, f"\u00b1{extent:.2g}\u00b0", transform=ax.transAxes, fontsize=5.5,
            color="#444444", ha="left", va="bottom")


def misfit_map(world, path, omega_obs, omega_pred):
    """Magnitude of the predicted minus observed velocity (mm/yr).

    Parameters
    ----------
    world : World
    path : str or Path
    omega_obs, omega_pred : ndarray, shape (P, 3)
        rad/s.

    Returns
    -------
    Path
    """
    fig, ax = _axes(f"{world.name}: velocity misfit |v_pred - v_obs| (mm/yr)",
                    len(world.plates))
    lon, lat, idx = _raster(world, 1.0)
    LON, LAT = np.meshgrid(lon, lat)
    xyz = sphere.lonlat_to_xyz(LON, LAT).reshape(-1, 3)
    dw = (omega_pred - omega_obs)[idx.ravel()]
    ve, vn = velocity_en(dw, xyz, world.radius_m)
    mag = np.hypot(ve, vn).reshape(idx.shape)
    top = float(np.percentile(mag, CLIP_PERCENTILE)) or 1.0
    m = _grid_image(ax, 1.0, mag, cmap="viridis", vmin=0, vmax=top)
    draw_boundaries(ax, world)
    fig.colorbar(m, ax=ax, shrink=0.6, extend="max", pad=0.02,
                 label=f"mm/yr (scale clipped at the {CLIP_PERCENTILE:g}th percentile, "
                       f"{top:.1f}; max {mag.max():.1f})")
    label_plates(ax, world)
    _legend(ax)
    caption(fig, "Speed of the difference between predicted (mantle at rest) and observed "
            "motions, on a 1 degree grid.")
    return _save(fig, path)


def budget_chart(path, fit):
    """Per plate, each term's share of the driving torque (stacked bars).

    Parameters
    ----------
    path : str or Path
    fit : FitResult

    Returns
    -------
    Path
    """
    plt = _plt()
    plates = [p["plate"] for p in fit.plates]
    labels = list(fit.coefficients)
    fig, ax = plt.subplots(figsize=(9, 0.35 * len(plates) + 1.5), dpi=DPI)
    left_pos = np.zeros(len(plates))
    left_neg = np.zeros(len(plates))
    cols = force_colours(labels)
    for l in labels:
        v = np.array([p["budget"].get(l) or 0.0 for p in fit.plates])
        start = np.where(v >= 0, left_pos, left_neg)
        ax.barh(plates, v, left=start, color=cols[l], label=l, edgecolor="white")
        left_pos += np.where(v >= 0, v, 0)
        left_neg += np.where(v < 0, v, 0)
    ax.axvline(0, color="k", lw=0.8)
    ax.set_xlabel("share of the plate's driving torque (driving > 0, resisting < 0)")
    ax.set_title(f"force budget: {fit.hypothesis}")
    ax.legend(fontsize=8, loc="lower right")
    ax.invert_yaxis()
    caption(fig, "Each term's torque at the fitted coefficients and observed motions, "
            "projected on the plate's driving torque.")
    return _save(fig, path)


def torque_chart(path, table):
    """Per plate, the magnitude of each term's torque (log scale).

    Parameters
    ----------
    path : str or Path
    table : TorqueTable
        At the fitted coefficients, motion-dependent terms at the motions in the fit's
        frame (:func:`torque.workflows.torque_table`).

    Returns
    -------
    Path
    """
    plt = _plt()
    P = len(table.plates)
    fig, ax = plt.subplots(figsize=(max(8, 0.6 * P), 4.5), dpi=DPI)
    width = 0.8 / len(table.labels)
    cols = force_colours(table.labels)
    mags = table.magnitude.T                                             # (K, P)
    top = float(np.max(mags)) or 1.0
    for k, (label, mag) in enumerate(zip(table.labels, mags)):
        # a term with no torque on a plate gets no bar (not a bar at an arbitrary floor)
        ax.bar(np.arange(P) + k * width, np.where(mag > 0, mag, np.nan), width,
               label=label, color=cols[label])
    ax.set_yscale("log")
    ax.set_ylim(top * 1e-4, top * 3)
    # plain numbers (0.01, 0.1, 1, 10) rather than typeset powers of ten: the unit says 10^25
    from matplotlib.ticker import FuncFormatter, NullFormatter
    ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
    ax.yaxis.set_minor_formatter(NullFormatter())
    ax.set_xticks(np.arange(P) + 0.4 - width / 2)
    ax.set_xticklabels(table.plates, rotation=45, ha="right", fontsize=8)
    ax.set_ylabel("|torque| (10^25 N m)")
    ax.set_title("torque of each term on each plate (at the fitted coefficients)")
    ax.legend(fontsize=8, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    caption(fig, "Magnitudes of the torques about the planet's centre, log scale; motion-"
            "dependent terms at the observed motions, in the fit's mantle frame.")
    return _save(fig, path)


def torque_globe(path, world, table):
    """Each term's torque on each plate as an arrow at the plate's centroid, on two
    orthographic hemispheres.

    An arrow points where the torque would move the centroid (``tau x c``, the direction of
    the equivalent force of :class:`torque.results.TorqueTable`) and its length is the
    torque's magnitude about axes other than the centroid's (10^25 N m, with a key).

    Parameters
    ----------
    path : str or Path
    world : World
    table : TorqueTable
        Of ``world``'s plates (:func:`torque.workflows.torque_table`).

    Returns
    -------
    Path
    """
    import cartopy.crs as ccrs
    from matplotlib.lines import Line2D
    plt = _plt()
    from ..results import TORQUE_UNIT_NM
    force = table.equivalent_force_n()                                  # (P, K, 2)
    # arrows scaled as torques: |F| R = |tau perpendicular to c|
    arrow = force * world.radius_m / TORQUE_UNIT_NM
    clon, clat = sphere.xyz_to_lonlat(table.centroid)
    cols = force_colours(table.labels)
    longest = float(np.max(np.linalg.norm(arrow, axis=-1))) or 1.0
    key = float(f"{longest / 2:.0g}") or longest / 2
    fig = plt.figure(figsize=(13, 6.8), dpi=DPI)
    for i, centre in enumerate((0.0, 180.0)):
        ax = fig.add_subplot(1, 2, i + 1, projection=ccrs.Orthographic(centre, 0.0))
        ax.set_global()
        draw_plates(ax, world, labels=False)
        for k, label in enumerate(table.labels):
            q = ax.quiver(clon, clat, arrow[:, k, 0], arrow[:, k, 1],
                          transform=ccrs.PlateCarree(), color=cols[label], scale=longest * 6,
                          width=0.006, zorder=6)
        ax.quiverkey(q, 0.82, 0.04, key, f"{key:g} x 10^25 N m", labelpos="E", color="#333333",
                     coordinates="axes", fontproperties={"size": 8})
        ax.set_title(f"centred on {centre:g} E", fontsize=10)
    fig.suptitle(f"{world.name}: torque of each term on each plate (10^25 N m)", fontsize=12)
    fig.legend(handles=[Line2D([], [], color=cols[l], lw=3, label=l) for l in table.labels],
               loc="lower center", ncol=min(len(table.labels), 6), fontsize=8,
               frameon=False, bbox_to_anchor=(0.5, 0.04))
    caption(fig, "Arrows at plate centroids point where each torque would move the centroid; "
            "length is the torque's magnitude (less its spin about the centroid), at the "
            "fitted coefficients and the observed motions in the fit's mantle frame.")
    return _save(fig, path)


# ----------------------------------------------------------------------------------------
# the registry behind `torque map --kind`: a new kind is one entry
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True)
class MapInputs:
    """What a map may draw from, already read and checked (None where not given).

    Attributes
    ----------
    inputs : Inputs
        The world and its data (:class:`torque.io.Inputs`, or any
        :class:`~torque.data.WorldData`).
    observed, predicted : ndarray, shape (P, 3), optional
        Euler vectors (rad/s) in world plate order.
    fit : FitResult, optional
        The results of ``torque fit``.
    fit_path : str, optional
        The fit's file, named in messages.
    hypothesis : Hypothesis, optional
    torques : TorqueTable, optional
        The hypothesis' torques at the fit's coefficients and in its frame.
    frame : {"mantle", "motions"}
        The frame ``observed`` and ``predicted`` are in (see
        :func:`torque.workflows.map_inputs`, which makes these).
    """

    inputs: object
    observed: np.ndarray | None = None
    predicted: np.ndarray | None = None
    fit: object = None
    fit_path: str | None = None
    hypothesis: object = None
    torques: object = None
    frame: str = "mantle"

    def __repr__(self) -> str:
        given = [k for k in ("observed", "predicted", "fit", "hypothesis")
                 if getattr(self, k) is not None]
        return f"MapInputs({self.inputs!r}, given: {', '.join(given) or 'none'})"

    @property
    def world(self):
        """The world."""
        return self.inputs.world

    @property
    def continents(self):
        """The world's continents, or None."""
        return self.inputs.continents


@dataclass(frozen=True)
class MapKind:
    """One kind of figure: what it shows, which inputs it needs and allows, how to draw.

    Attributes
    ----------
    shows : str
        What the figure shows (for --help).
    needs, allows : tuple of str
        Inputs among ``motions``, ``predicted``, ``fit``, ``hypothesis`` that the kind
        needs, and that it can use.
    draw : callable
        ``draw(inputs: MapInputs, path) -> path``.
    """

    shows: str
    needs: tuple
    allows: tuple
    draw: object                              # draw(inputs: MapInputs, path)

    def __repr__(self) -> str:
        return f"MapKind({self.shows!r}, needs {list(self.needs)})"


def _draw_torques(inp: MapInputs, path):
    return torque_chart(path, inp.torques)


def _draw_misfit(inp: MapInputs, path):
    if inp.fit is not None:
        if inp.observed is not None or inp.predicted is not None:
            raise InputError("a misfit map takes --fit, or --motions with --predicted, not "
                             "both", hint="the fit's poles are both in the mantle's frame")
        obs, pred = (pole_to_vector(*np.array([[p[k]["lat"], p[k]["lon"], p[k]["rate"]]
                                                for p in inp.fit.plates]).T)
                     for k in ("observed", "predicted"))
        order = [inp.fit.plate_names.index(n) for n in inp.world.plate_names]
        return misfit_map(inp.world, path, obs[order], pred[order])
    if inp.observed is None or inp.predicted is None:
        raise InputError("a misfit map needs --fit, or --motions and --predicted")
    return misfit_map(inp.world, path, inp.observed, inp.predicted)


def _draw_torque_globe(inp: MapInputs, path):
    return torque_globe(path, inp.world, inp.torques)


def _draw_velocities(inp: MapInputs, path):
    return velocity_map(inp.world, path, inp.observed, inp.predicted, inp.continents,
                        inp.frame if inp.fit is not None else None)


KINDS = {
    "plates": MapKind("plates, continents and boundaries by kind", (), (),
                      lambda i, p: plates_map(i.world, p, i.continents)),
    "velocities": MapKind("velocity arrows (needs --motions; --predicted adds predicted "
                          "arrows; --fit puts both in its mantle frame, or with --frame "
                          "motions in the motions' frame)", ("motions",),
                          ("motions", "predicted", "fit"), _draw_velocities),
    "poles": MapKind("observed and predicted poles with 95 % ellipses (needs --fit)",
                     ("fit",), ("fit",), lambda i, p: poles_map(i.world, p, i.fit)),
    "misfit": MapKind("velocity misfit (needs --fit, whose observed and predicted poles "
                      "are both in the mantle's frame, or --motions and --predicted)",
                      (), ("motions", "predicted", "fit"), _draw_misfit),
    "budget": MapKind("force budget per plate (needs --fit)", ("fit",), ("fit",),
                      lambda i, p: budget_chart(p, i.fit)),
    "torques": MapKind("torque of each term on each plate (needs --hypothesis, --motions, "
                       "--fit)", ("hypothesis", "motions", "fit"),
                       ("hypothesis", "motions", "fit"), _draw_torques),
    "torque-globe": MapKind("each term's torque as arrows at plate centroids on two "
                            "hemispheres (needs --hypothesis, --motions, --fit)",
                            ("hypothesis", "motions", "fit"),
                            ("hypothesis", "motions", "fit"), _draw_torque_globe),
}

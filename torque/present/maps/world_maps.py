"""Maps of the world: plates and boundaries, velocities, Euler poles with their ellipses,
and the velocity misfit.
"""

from __future__ import annotations

import numpy as np

from ... import sphere
from ...euler import velocity_en
from .layers import (
    _grid_image,
    _legend,
    _project_lines,
    _raster,
    _save,
    draw_boundaries,
    draw_plates,
)
from .style import (
    CLIP_PERCENTILE,
    DPI,
    OBSERVED_COLOUR,
    PREDICTED_COLOUR,
    _axes,
    _plt,
    caption,
    figure_size,
    label_plates,
    label_size,
    place_labels,
)

__all__ = ["MAX_ZOOMS", "plates_map", "velocity_map", "poles_map", "misfit_map"]

#: The most plates the poles map zooms on (a world of more: the worst-fitted).
MAX_ZOOMS = 14


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
    # the caption says what is drawn: continents and teeth only where there are some
    has_continents = continents is not None
    has_trenches = any(b.kind == "subduction" for b in world.boundaries)
    caption(fig, "Plates (fills tell neighbours apart)"
            + (", continents hatched" if has_continents else "")
            + ", boundaries by kind"
            + (" with teeth on the overriding side of subduction zones" if has_trenches
               else "")
            + ". Geographic coordinates, Equal Earth projection.")
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

    The top panel shows every pole on the globe; below it, one small panel per plate (at
    most :data:`MAX_ZOOMS`: for more plates, those whose poles lie farthest apart, which the
    caption names), centred between its two poles in local azimuthal coordinates (degrees of arc east and
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
    # the zooms: every plate of a small world, else the worst-fitted (poles farthest apart)
    zoomed = (plates if len(plates) <= MAX_ZOOMS else
              sorted(plates, key=lambda p: -(p.pole_distance_deg or 0.0))[:MAX_ZOOMS])
    predicted_key = ("prediction_ellipse" if any(p.prediction_ellipse for p in plates)
                     else "pole_ellipse")
    ncol = min(7, max(len(zoomed), 1))
    nrow = -(-len(zoomed) // ncol)
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
        ax.plot([getattr(p, which).lon for p in plates],
                [getattr(p, which).lat for p in plates],
                ls="", ms=6, transform=ccrs.PlateCarree(), zorder=6, **marker)
    drawn = {}
    for key, which, colour, style in styles:
        rings = [np.column_stack(_ellipse_lonlat(getattr(p, which).lat, getattr(p, which).lon,
                                                 e["major_deg"], e["minor_deg"],
                                                 e["azimuth_deg"]))
                 for p in plates for e in [getattr(p, key) or {}] if e.get("major_deg")]
        drawn[which] = bool(rings)
        if rings:
            ax.add_collection(LineCollection(_project_lines(ax.projection, rings),
                                             colors=colour, linewidths=1.4,
                                             linestyles=[style], zorder=7,
                                             transform=ax.transData), autolim=False)
    markers = ([getattr(p, w).lon for p in plates for w in ("observed", "predicted")],
               [getattr(p, w).lat for p in plates for w in ("observed", "predicted")])
    place_labels(ax, [p.predicted.lon for p in plates],
                 [p.predicted.lat for p in plates], [p.plate for p in plates],
                 label_size(len(plates)) - 1, obstacles=markers)
    for i, p in enumerate(zoomed):
        _pole_zoom(fig.add_subplot(grid[1 + i // ncol, i % ncol]), p, styles)
    what = ("prediction: coefficients and observations" if predicted_key == "prediction_ellipse"
            else "coefficients")
    # the legend lists only what is drawn (no ellipse without a covariance)
    handles = [Line2D([], [], marker="o", ls="", mfc="white", mec=OBSERVED_COLOUR,
                      label="observed pole")]
    if drawn.get("observed"):
        handles.append(Line2D([], [], color=OBSERVED_COLOUR, ls="--",
                              label="its 95 % ellipse (covariance)"))
    handles.append(Line2D([], [], marker="^", ls="", color=PREDICTED_COLOUR,
                          label="predicted pole"))
    if drawn.get("predicted"):
        handles.append(Line2D([], [], color=PREDICTED_COLOUR,
                              label=f"its 95 % ellipse ({what})"))
    ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, -0.01),
              ncol=len(handles), fontsize=7, frameon=False)
    which = ("each plate's poles" if len(zoomed) == len(plates) else
             f"the poles of the {len(zoomed)} of {len(plates)} plates whose poles lie "
             "farthest apart")
    caption(fig, "Observed and predicted Euler poles in the frame where the mantle is at "
            f"rest; below, {which} zoomed (north up; corner: the box's half-width in "
            "degrees).")
    return _save(fig, path)


def _pole_zoom(ax, plate, styles):
    """One plate's observed and predicted poles and ellipses, in local coordinates."""
    from pyproj import Geod
    g = Geod(a=1.0, b=1.0)
    o, q = plate.observed, plate.predicted
    # the midpoint of the two poles, as the centre of the local azimuthal frame
    mid = sphere.lonlat_to_xyz(np.array([o.lon, q.lon]), np.array([o.lat, q.lat]))
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
        at = getattr(plate, which)
        x, y = local(at.lon, at.lat)
        marker = dict(marker="^", color=colour) if which == "predicted" else \
            dict(marker="o", mfc="white", mec=colour)
        ax.plot(x, y, ls="", ms=4, **marker)
        extent = max(extent, float(np.hypot(x, y).max()))
        e = getattr(plate, key) or {}
        if e.get("major_deg"):
            ex, ey = local(*_ellipse_lonlat(at.lat, at.lon, e["major_deg"],
                                            e["minor_deg"], e["azimuth_deg"]))
            ax.plot(ex, ey, color=colour, lw=1.0, ls=style)
            extent = max(extent, float(np.hypot(ex, ey).max()))
    extent = 1.15 * extent or 1.0
    ax.set_xlim(-extent, extent)
    ax.set_ylim(-extent, extent)
    ax.set_aspect("equal")
    ax.set_title(plate.plate, fontsize=7, pad=2)
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

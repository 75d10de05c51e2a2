"""The maps' own palette, sizes, captions and plate labels (no overlaps), shared by every
figure.
"""

from __future__ import annotations

import textwrap
import weakref

import numpy as np

from ... import sphere

__all__ = ["PLATE_COLOURS", "KIND_STYLE", "OBSERVED_COLOUR", "PREDICTED_COLOUR",
           "FORCE_COLOURS", "CLIP_PERCENTILE", "force_colours", "DPI", "figure_size",
           "label_size", "caption", "place_labels", "label_plates", "plate_colours"]

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

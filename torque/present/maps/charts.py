"""Charts of torques: the force budget per plate, each term's torque on each plate, and the
torques as arrows on two hemispheres.
"""

from __future__ import annotations

import numpy as np

from ... import sphere
from .layers import _save, draw_plates
from .style import DPI, _plt, caption, force_colours

__all__ = ["budget_chart", "torque_chart", "torque_globe"]


#: The widest share the budget chart's axis shows; longer bars are clipped and labelled.
BUDGET_CLIP = 3.0


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
    plates = [p.plate for p in fit.plates]
    labels = list(fit.coefficients)
    fig, ax = plt.subplots(figsize=(9, 0.35 * len(plates) + 1.5), dpi=DPI)
    left_pos = np.zeros(len(plates))
    left_neg = np.zeros(len(plates))
    cols = force_colours(labels)
    for l in labels:
        v = np.array([p.budget.get(l) or 0.0 for p in fit.plates])
        start = np.where(v >= 0, left_pos, left_neg)
        ax.barh(plates, v, left=start, color=cols[l], label=l, edgecolor="white")
        left_pos += np.where(v >= 0, v, 0)
        left_neg += np.where(v < 0, v, 0)
    ax.axvline(0, color="k", lw=0.8)
    # one symmetric axis, clipped: a plate whose driving torque nearly vanishes has shares
    # of tens, which would flatten every other bar; clipped bars say their total
    extent = np.maximum(left_pos, -left_neg)
    lim = float(min(max(1.2, 1.05 * extent.max(initial=0.0)), BUDGET_CLIP))
    ax.set_xlim(-lim, lim)
    clipped = 0
    for y, (pos, neg) in enumerate(zip(left_pos, left_neg)):
        for end, side in ((pos, 1), (neg, -1)):
            if abs(end) > lim:
                clipped += 1
                ax.text(side * lim * 0.98, y, f"{end:+.3g}", ha="right" if side > 0 else "left",
                        va="center", fontsize=7, color="k",
                        bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.8))
    ax.set_xlabel("share of the plate's driving torque (driving > 0, resisting < 0)")
    ax.set_title(f"force budget: {fit.hypothesis}")
    ax.legend(fontsize=8, loc="lower right")
    ax.invert_yaxis()
    caption(fig, "The driving torque of a plate is the sum of the motion-independent torques of "
            "all terms (ridge push, slab pull, ...) at the fitted coefficients; each bar is a "
            "term's torque at the observed motions, projected on it. Drag is taken at the observed "
            "motions, so it counts as driving where a plate's observed motion has a component "
            "against its driving torque: a plate the hypothesis does not balance there."
            + (f" Axis clipped at ±{lim:.3g}: {clipped} bar end(s) beyond it are labelled with "
               "their value." if clipped else ""))
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
    from ...results import TORQUE_UNIT_NM
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

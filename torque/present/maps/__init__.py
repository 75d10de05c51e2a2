"""Maps and charts of plates, boundaries, motions, poles, misfits and torques.

Drawn with cartopy (Equal Earth projection) and matplotlib, from the world's own geometry:
no coastlines or other data are loaded, so nothing is downloaded. Plates are filled from a
0.5 degree raster of plate indices (exact point location), which is right at the poles and
across the antimeridian; lines are drawn as geodesics.

The palette is this project's own: eight muted colours that stay apart for the common
forms of colour-vision deficiency (they differ in lightness as well as hue), assigned so
that neighbouring plates differ. Boundary kinds have their own colours and line styles, and
subduction zones carry teeth on the overriding plate's side, as geologists draw them.

Modules: :mod:`~torque.present.maps.style` (palette, sizes, captions, labels),
:mod:`~torque.present.maps.layers` (plates, boundaries, teeth, images, saving),
:mod:`~torque.present.maps.world_maps` and :mod:`~torque.present.maps.charts` (the
figures), :mod:`~torque.present.maps.kinds` (the registry behind ``torque map``).
"""

from .charts import budget_chart, torque_chart, torque_globe
from .kinds import KINDS, MapInputs, MapKind
from .layers import draw_boundaries, draw_plates
from .style import (
    CLIP_PERCENTILE,
    DPI,
    FORCE_COLOURS,
    KIND_STYLE,
    OBSERVED_COLOUR,
    PLATE_COLOURS,
    PREDICTED_COLOUR,
    caption,
    figure_size,
    force_colours,
    label_plates,
    label_size,
    place_labels,
    plate_colours,
)
from .world_maps import misfit_map, plates_map, poles_map, velocity_map

__all__ = [
    "PLATE_COLOURS", "KIND_STYLE", "OBSERVED_COLOUR", "PREDICTED_COLOUR", "FORCE_COLOURS",
    "CLIP_PERCENTILE", "force_colours", "DPI", "figure_size", "label_size", "caption",
    "place_labels", "label_plates", "plate_colours", "draw_plates", "draw_boundaries",
    "plates_map", "velocity_map", "poles_map", "misfit_map", "budget_chart",
    "torque_chart", "torque_globe", "MapInputs", "MapKind", "KINDS"]

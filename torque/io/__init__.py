"""Every file the tool reads or writes, in one place.

Readers raise :class:`~torque.errors.InputError` naming the file, the feature or line, and
what is wrong; writers write atomically (a temporary file renamed into place). The rest of
the package reads no file.

=========================  =====================================================
module                     formats
=========================  =====================================================
:mod:`~torque.io.files`    guarded text/JSON/TOML readers, atomic writes
:mod:`~torque.io.tables`   CSV tables (one reader), point lists
:mod:`~torque.io.world`    world files (TOML), worlds from rings in memory
:mod:`~torque.io.geojson`  plates, boundaries, continents, points (GeoJSON)
:mod:`~torque.io.grids`    age and mantle-flow grids (NetCDF, CSV), velocity fields
:mod:`~torque.io.motions`  motions CSV (Euler vectors and covariances), full covariances
:mod:`~torque.io.hypothesis`  hypothesis files (TOML)
:mod:`~torque.io.fit`      strict JSON out, the fit file of ``torque fit``
:mod:`~torque.io.inputs`   :class:`Inputs`: a world and its data, read once
=========================  =====================================================
"""

from .files import atomic_path, atomic_write, output_suffix, read_toml
from .fit import dumps, read_coefficients, read_fit, write_json
from .geojson import (read_boundaries, read_continents, read_plates, write_boundaries_geojson,
                      write_feature_collection, write_points_geojson)
from .grids import (field_dataset, read_ages, read_flow, write_age_grid, write_netcdf)
from .hypothesis import hypothesis_toml, load_hypothesis, write_hypothesis
from .inputs import Inputs, check_world, compute_torques
from .motions import read_covariance, read_motions, write_covariance, write_motions
from .tables import Table, read_points, read_table, write_csv
from .world import load_world, world_from_rings, write_world_file

__all__ = ["Inputs", "Table", "atomic_path", "atomic_write", "check_world", "compute_torques",
           "dumps",
           "field_dataset", "hypothesis_toml", "load_hypothesis", "load_world",
           "output_suffix", "read_ages", "read_boundaries", "read_coefficients",
           "read_continents", "read_covariance", "read_flow", "read_fit", "read_motions", "read_plates",
           "read_points", "read_table", "read_toml", "world_from_rings", "write_age_grid",
           "write_boundaries_geojson", "write_covariance", "write_csv", "write_feature_collection", "write_hypothesis", "write_json",
           "write_motions", "write_netcdf", "write_points_geojson", "write_world_file"]

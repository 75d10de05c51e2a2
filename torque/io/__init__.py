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

from .._lazy import lazy_exports

#: Where each name lives: imported on first use (PEP 562), so that a command imports the
#: readers it uses and not every one.
_EXPORTS = {
    "atomic_path": "files", "atomic_write": "files", "output_suffix": "files",
    "read_toml": "files", "dumps": "fit", "fit_from_dict": "fit", "read_fit": "fit",
    "write_json": "fit", "read_boundaries": "geojson", "read_continents": "geojson",
    "read_plates": "geojson", "write_boundaries_geojson": "geojson",
    "write_feature_collection": "geojson", "write_points_geojson": "geojson",
    "field_dataset": "grids", "read_ages": "grids", "read_flow": "grids",
    "write_age_grid": "grids", "write_field": "grids", "write_netcdf": "grids",
    "hypothesis_toml": "hypothesis",
    "load_hypothesis": "hypothesis", "write_hypothesis": "hypothesis", "Inputs": "inputs",
    "check_world": "inputs", "compute_torques": "inputs", "read_covariance": "motions",
    "read_motions": "motions", "write_covariance": "motions", "write_motions": "motions",
    "Table": "tables", "read_points": "tables", "read_table": "tables",
    "write_csv": "tables", "load_world": "world", "world_from_rings": "world",
    "write_world_file": "world",
}


__getattr__, __dir__ = lazy_exports(__name__, globals(), _EXPORTS)

__all__ = ["Inputs", "Table", "atomic_path", "atomic_write", "check_world", "compute_torques",
           "dumps", "fit_from_dict", "field_dataset", "hypothesis_toml", "load_hypothesis",
           "load_world",
           "output_suffix", "read_ages", "read_boundaries", "read_continents",
           "read_covariance", "read_fit", "read_flow", "read_motions", "read_plates",
           "read_points", "read_table", "read_toml", "world_from_rings", "write_age_grid",
           "write_boundaries_geojson", "write_covariance", "write_csv", "write_feature_collection",
           "write_field", "write_hypothesis", "write_json", "write_motions", "write_netcdf",
           "write_points_geojson", "write_world_file"]

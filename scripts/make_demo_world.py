"""Generate the bundled demo world in polygons_demo/, deterministically.

The demo is an invented, Earth-sized planet ("Orrery") whose plates are spherical Voronoi
cells of fixed generator points (scipy.spatial.SphericalVoronoi), so every edge is a
great-circle arc and neighbouring plates share their vertices exactly. Plate names are
invented words.

    python scripts/make_demo_world.py [OUTDIR]
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np
from scipy.spatial import SphericalVoronoi

ROOT = Path(__file__).resolve().parents[1]
SEED = 20261202
PLATE_NAMES = [
    "Vessane", "Orlum", "Tharrik", "Quessa", "Bruvel", "Ilvane", "Sarpenna",
    "Kelvor", "Nimbril", "Drastel", "Ulmera", "Phaxon", "Corrindel", "Yorrow",
]


def generators(n: int, seed: int = SEED) -> np.ndarray:
    """Well-spread but irregular points: a Fibonacci lattice, jittered, then normalised."""
    rng = np.random.default_rng(seed)
    k = np.arange(n) + 0.5
    z = 1.0 - 2.0 * k / n
    phi = np.pi * (1.0 + 5.0 ** 0.5) * k
    pts = np.c_[np.sqrt(1 - z * z) * np.cos(phi), np.sqrt(1 - z * z) * np.sin(phi), z]
    pts += rng.normal(scale=0.18, size=pts.shape)
    return pts / np.linalg.norm(pts, axis=1, keepdims=True)


def plate_rings(gen: np.ndarray):
    """Counter-clockwise lon/lat rings (closed) of the Voronoi cells of ``gen``."""
    sv = SphericalVoronoi(gen)
    sv.sort_vertices_of_regions()
    rings = []
    for g, region in zip(gen, sv.regions):
        v = sv.vertices[region]
        # counter-clockwise seen from outside: (v1 - v0) x (v2 - v0) points away from the centre
        if np.dot(np.cross(v[1] - v[0], v[2] - v[0]), g) < 0:
            v = v[::-1]
        lon = np.degrees(np.arctan2(v[:, 1], v[:, 0]))
        lat = np.degrees(np.arcsin(np.clip(v[:, 2], -1, 1)))
        ring = np.round(np.c_[lon, lat], 10).tolist()
        rings.append(ring + [ring[0]])
    return rings


def synthetic_motions(n: int, seed: int = SEED + 1) -> np.ndarray:
    """Invented Euler vectors (lat, lon, rate deg/Myr) for the demo's plates.

    Placeholders until the forward model generates the demo's motions; they are not
    observations of anything.
    """
    rng = np.random.default_rng(seed)
    lat = np.degrees(np.arcsin(rng.uniform(-1, 1, n)))
    lon = rng.uniform(-180, 180, n)
    rate = rng.uniform(0.1, 1.2, n)
    return np.round(np.c_[lat, lon, rate], 6)


def write(outdir: Path) -> None:
    outdir.mkdir(parents=True, exist_ok=True)
    gen = generators(len(PLATE_NAMES))
    rings = plate_rings(gen)
    feats = [{"type": "Feature", "properties": {"plate": name},
              "geometry": {"type": "Polygon", "coordinates": [ring]}}
             for name, ring in zip(PLATE_NAMES, rings)]
    (outdir / "plates.geojson").write_text(
        json.dumps({"type": "FeatureCollection", "features": feats}, indent=1) + "\n")
    rows = ["plate,lat,lon,rate"] + [f"{n},{a:.6f},{b:.6f},{c:.6f}" for n, (a, b, c) in
                                     zip(PLATE_NAMES, synthetic_motions(len(PLATE_NAMES)))]
    (outdir / "motions.csv").write_text("\n".join(rows) + "\n")
    (outdir / "world.toml").write_text(
        "# Orrery: an invented Earth-sized planet for the torque demo (synthetic data).\n"
        'name = "Orrery"\n'
        "radius_km = 6371.0\n"
        'plates = "plates.geojson"\n')


if __name__ == "__main__":
    write(Path(sys.argv[1]) if len(sys.argv) > 1 else ROOT / "polygons_demo")

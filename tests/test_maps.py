"""Maps and charts: the registry of kinds, what each needs, and figures written.

Sources: a proper colouring gives neighbours different colours (definition); file
signatures (PNG, SVG/XML) for what was written.
"""

from pathlib import Path

import numpy as np
import pytest

from torque.io import load_world
from torque.present.maps import KINDS, plate_colours

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "polygons_demo"
INPUTS = {"motions", "predicted", "fit", "hypothesis"}


@pytest.fixture(scope="module")
def demo_fit(tmp_path_factory):
    from torque.cli import main
    out = tmp_path_factory.mktemp("fit") / "fit.json"
    assert main(["fit", str(DEMO / "world.toml"),
                 str(DEMO / "hypotheses" / "ridge_slab_drag.toml"),
                 str(DEMO / "motions.csv"), "-o", str(out)]) == 0
    return out


def test_every_kind_says_what_it_needs_within_what_it_allows():
    for name, kind in KINDS.items():
        assert set(kind.needs) <= set(kind.allows) <= INPUTS, name
        assert kind.shows and callable(kind.draw)


def test_neighbouring_plates_get_different_colours():
    world = load_world(DEMO / "world.toml")
    colours = plate_colours(world)
    for b in world.boundaries:
        assert colours[world.plate_index[b.left]] != colours[world.plate_index[b.right]]


def test_a_map_is_a_png(tmp_path, cli):
    status, _, err = cli("map", DEMO / "world.toml", "--kind", "plates", "-o",
                         tmp_path / "p.png")
    assert status == 0, err
    data = (tmp_path / "p.png").read_bytes()
    assert data.startswith(b"\x89PNG\r\n\x1a\n") and len(data) > 20_000


@pytest.mark.parametrize("argv,words", [
    (["--kind", "poles"], "needs --fit"),
    (["--kind", "plates", "--predicted", "x.csv"], "--predicted make(s) no sense"),
    (["--kind", "misfit", "--motions", str(DEMO / "motions.csv")],
     "needs --fit, or --motions and --predicted"),
    (["--kind", "plates", "-o", "map.jpg"], "cannot write .jpg"),
    (["--kind", "sideways"], "invalid choice"),
])
def test_map_options_that_make_no_sense(tmp_path, cli, argv, words):
    if "-o" not in argv:
        argv = argv + ["-o", str(tmp_path / "m.png")]
    status, out, err = cli("map", DEMO / "world.toml", *argv)
    assert status == 2 and words in err and "Traceback" not in err
    assert not list(tmp_path.iterdir())


def test_map_command_writes_a_figure(tmp_path, cli):
    status, out, err = cli("map", DEMO / "world.toml", "--kind", "velocities", "--motions",
                           DEMO / "motions.csv", "-o", tmp_path / "v.svg")
    assert status == 0, err
    assert (tmp_path / "v.svg").read_text().lstrip().startswith("<?xml")


@pytest.mark.parametrize("kind,extra", [
    ("budget", []),
    ("torques", ["--hypothesis", str(DEMO / "hypotheses" / "ridge_slab_drag.toml"),
                 "--motions", str(DEMO / "motions.csv")]),
])
def test_chart_kinds_draw_through_the_command_line(demo_fit, tmp_path, cli, kind, extra):
    # every kind is one entry of torque.present.maps.KINDS; the charts are the quick ones to draw
    fit = demo_fit
    status, _, err = cli("map", DEMO / "world.toml", "--kind", kind, "--fit", fit, *extra,
                         "-o", tmp_path / f"{kind}.svg")
    assert status == 0, err
    assert (tmp_path / f"{kind}.svg").read_text().lstrip().startswith("<?xml")


def test_the_poles_map_zooms_on_every_plate(demo_fit, tmp_path, monkeypatch):
    # one globe and one zoom panel per plate, each holding both poles (common practice, no
    # source: small ellipses must be visible)
    import numpy as np
    from torque.present import maps
    from torque.io import read_fit
    fit = read_fit(demo_fit)
    seen = {}
    real_save = maps.layers._save

    def keep(fig, path):
        seen["axes"] = fig.axes
        return real_save(fig, path)
    monkeypatch.setattr(maps.world_maps, "_save", keep)
    maps.poles_map(load_world(DEMO / "world.toml"), tmp_path / "p.png", fit)
    zooms = seen["axes"][1:]
    assert len(zooms) == len(fit.plates)
    assert [a.get_title() for a in zooms] == [p.plate for p in fit.plates]
    for a in zooms:
        x0, x1 = a.get_xlim()
        for line in a.get_lines():
            xs = np.asarray(line.get_xdata(), float)
            assert np.all((xs >= x0) & (xs <= x1))


@pytest.fixture
def figures(monkeypatch):
    """Every figure a map function saves, kept open for inspection."""
    from torque.present import maps
    kept = []
    real_save = maps.layers._save

    def keep(fig, path):
        kept.append(fig)
        fig.canvas.draw()
        with open(path, "wb") as fh:
            fig.savefig(fh, format="png", dpi=40)
        return path
    for module in (maps.world_maps, maps.charts):      # where the figures call it
        monkeypatch.setattr(module, "_save", keep)
    yield kept
    del real_save


def _texts(fig):
    return [t.get_text() for t in fig.texts]


def test_every_kind_carries_a_caption_and_a_legend(demo_fit, tmp_path, cli, figures):
    # what a reader needs to read a figure (common practice, no source)
    extra = {"plates": [], "poles": ["--fit", demo_fit], "budget": ["--fit", demo_fit],
             "misfit": ["--fit", demo_fit],
             "velocities": ["--motions", DEMO / "motions.csv"],
             "torques": ["--hypothesis", DEMO / "hypotheses" / "ridge_slab_drag.toml",
                         "--motions", DEMO / "motions.csv", "--fit", demo_fit],
             "torque-globe": ["--hypothesis", DEMO / "hypotheses" / "ridge_slab_drag.toml",
                              "--motions", DEMO / "motions.csv", "--fit", demo_fit]}
    assert set(extra) == set(KINDS)
    for kind, args in extra.items():
        status, _, err = cli("map", DEMO / "world.toml", "--kind", kind, *args,
                             "-o", tmp_path / f"{kind}.png")
        assert status == 0, (kind, err)
        fig = figures[-1]
        captions = [t for t in fig.texts if t.get_style() == "italic"]
        assert len(captions) == 1 and len(captions[0].get_text()) > 40, kind
        has_legend = bool(fig.legends) or any(a.get_legend() for a in fig.axes)
        assert has_legend, kind


def test_force_terms_never_take_a_plate_colour():
    from torque.present.maps import FORCE_COLOURS, PLATE_COLOURS, force_colours
    assert not set(map(str.lower, FORCE_COLOURS)) & set(map(str.lower, PLATE_COLOURS))
    assert force_colours(["a", "b"]) == {"a": FORCE_COLOURS[0], "b": FORCE_COLOURS[1]}


def test_labels_do_not_overlap_on_the_published_model(tmp_path):
    # 52 plates, many small (Bird 2003, ../shared/data/global-plates-2003)
    from torque.present import maps
    model = ROOT.parent / "shared" / "data" / "global-plates-2003" / "world.toml"
    if not model.is_file():
        pytest.skip(f"no published model at {model}")
    world = load_world(model)
    fig, ax = maps.style._axes("labels", len(world.plates))
    maps.draw_boundaries(ax, world)
    texts = maps.label_plates(ax, world)
    renderer = fig.canvas.get_renderer()
    boxes = [t.get_window_extent(renderer) for t in texts]
    clashes = sum(a.overlaps(b) for i, a in enumerate(boxes) for b in boxes[i + 1:])
    assert clashes == 0
    frame = ax.get_window_extent(renderer)
    assert all(frame.x0 <= b.x0 and b.x1 <= frame.x1 for b in boxes)
    assert maps.label_size(52) < maps.label_size(14)
    assert maps.figure_size(52)[0] > maps.figure_size(14)[0]


def test_the_misfit_scale_is_clipped_and_says_so(demo_fit, tmp_path, figures):
    from torque.present import maps
    from torque.io import read_fit
    maps.KINDS["misfit"].draw(maps.MapInputs(torque_inputs(), fit=read_fit(demo_fit)),
                              tmp_path / "m.png")
    fig = figures[-1]
    bar = [a for a in fig.axes if a.get_label() == "<colorbar>"][0]
    assert f"clipped at the {maps.CLIP_PERCENTILE:g}th percentile" in bar.get_ylabel()


def torque_inputs():
    from torque.io import Inputs
    return Inputs.load(DEMO / "world.toml")


def test_the_budget_chart_clips_its_axis_and_says_so(tmp_path):
    # a plate with a near-zero driving torque has shares of tens: the axis stays symmetric
    # and at most BUDGET_CLIP wide, the clipped ends carry their values, and the caption
    # defines the driving torque (common practice, no source)
    import matplotlib
    matplotlib.use("Agg")
    from matplotlib import pyplot as plt
    from torque.present.maps import charts
    from torque.results import Coefficient, FitResult, PlateResult, Pole

    def plate(name, budget):
        pole = Pole(0.0, 0.0, 1.0)
        return PlateResult(name, pole, pole, 0.0, 1.0, 0.0, (0.0, 0.0, 0.0), budget,
                           None, None, None)
    fit = FitResult("h", {"ridge": Coefficient(1.0, 0.0, False, "dimensionless", 1.0, 0.0),
                          "drag": Coefficient(1e15, 1e13, True, "Pa s/m", 1e15, 1e13)},
                    (plate("A", {"ridge": 1.0, "drag": -1.0}),
                     plate("B", {"ridge": 1.0, "drag": 25.0})))
    seen = {}
    real_save = charts._save

    def keep(fig, path):
        ax = fig.axes[0]
        seen["xlim"] = ax.get_xlim()
        seen["texts"] = [t.get_text() for t in ax.texts]
        seen["caption"] = " ".join(t.get_text() for t in fig.texts)
        return real_save(fig, path)
    charts._save = keep
    try:
        charts.budget_chart(tmp_path / "b.png", fit)
    finally:
        charts._save = real_save
        plt.close("all")
    lo, hi = seen["xlim"]
    assert lo == -hi and hi == charts.BUDGET_CLIP
    assert "+26" in seen["texts"]
    assert "driving torque of a plate is the sum" in seen["caption"]


def test_teeth_follow_distance_not_digitisation():
    # a line digitised every 0.1 degree or every 10 degrees gets the same teeth, one per
    # spacing of arc (common practice, no source)
    from torque.present.maps.layers import tooth_sites
    for step in (0.1, 10.0):
        lon = np.radians(np.arange(0.0, 90.0 + step / 2, step))
        xyz = np.c_[np.cos(lon), np.sin(lon), np.zeros_like(lon)]
        points, normals = tooth_sites(xyz, np.radians(7.0))
        assert len(points) == 13                       # 90 / 7, from 3.5 degrees on
        np.testing.assert_allclose(np.degrees(np.arctan2(points[:, 1], points[:, 0])),
                                   3.5 + 7.0 * np.arange(13), atol=1e-9)
        np.testing.assert_allclose(normals, np.tile([0, 0, 1.0], (13, 1)), atol=1e-12)


def test_the_plates_map_caption_says_only_what_is_drawn(tmp_path, monkeypatch):
    from torque.present.maps import world_maps
    from .worlds import voronoi_world
    said = []
    monkeypatch.setattr(world_maps, "caption", lambda fig, text: said.append(text))
    world_maps.plates_map(voronoi_world(6, 1), tmp_path / "p.png")
    assert "hatched" not in said[0] and "teeth" not in said[0]


def test_the_poles_map_zooms_on_the_worst_fitted_plates_only(tmp_path, monkeypatch):
    # a 52-plate model's 52 zooms filled two thirds of the figure: at most MAX_ZOOMS, the
    # plates whose poles lie farthest apart, and the caption says so (common practice,
    # no source)
    from torque.present.maps import world_maps
    from torque.results import FitResult, PlateResult, Pole
    from .worlds import voronoi_world
    world = voronoi_world(20, 4)
    plates = tuple(PlateResult(n, Pole(10.0, 20.0 + i, 1.0), Pole(12.0, 25.0 + i, 1.0),
                               float(i), 1.0, 0.0, (0.0, 0.0, 0.0), {}, None, None, None)
                   for i, n in enumerate(world.plate_names))
    said = []
    monkeypatch.setattr(world_maps, "caption", lambda fig, text: said.append(
        (text, [a.get_title() for a in fig.axes[1:]])))
    world_maps.poles_map(world, tmp_path / "p.png", FitResult("h", {}, plates))
    text, titles = said[0]
    assert len(titles) == world_maps.MAX_ZOOMS
    assert set(titles) == {p.plate for p in plates[-world_maps.MAX_ZOOMS:]}
    assert f"{world_maps.MAX_ZOOMS} of 20 plates" in text

"""Figures: line plots on chains, cropped slices, labelled colour bars, legends, error bars."""

import numpy as np

from arealaw import ball, box, hypercubic, region_modes
from arealaw.views._plots import (MARGIN, error_bar_label, mode_figure, region_figure,
                                  save_figure, scaling_figure)
from arealaw.workflow._fits import fit_scaling


def test_chain_modes_are_line_plots_with_unit_norm_profiles():
    net = hypercubic(40, mass=0.1)
    reg = box(net, 10, origin=5)
    fig = mode_figure(net, reg, *region_modes(net, reg, count=2))
    (ax,) = fig.axes
    lines = [ln for ln in ax.get_lines() if len(ln.get_xdata()) == 10]
    assert len(lines) == 2 and not ax.images
    for ln in lines:
        assert np.isclose(np.linalg.norm(ln.get_ydata()), 1.0, rtol=1e-10)
        assert list(ln.get_xdata()) == list(range(5, 15))


def test_3d_slices_are_cropped_to_the_region_and_a_margin():
    net = hypercubic((30, 30, 30), mass=0.2)
    reg = ball(net, 3.0)
    for fig in (region_figure(net, reg), mode_figure(net, reg, *region_modes(net, reg, count=1))):
        ax = fig.axes[0]
        coords = np.asarray(net.coords(reg.indices))
        lo, hi = coords[:, 2].min() - MARGIN - 0.5, coords[:, 2].max() + MARGIN + 0.5
        assert np.allclose(ax.get_xlim(), (lo, hi))
    bar = fig.axes[-1]
    assert "unit-norm profile" in bar.get_ylabel()


def test_residuals_say_which_error_bars_they_show():
    r = np.arange(2.0, 10.0)
    rng = np.random.default_rng(3)
    s = 0.3 * r**2 + 0.1 + 1e-3 * rng.standard_normal(r.size)
    exact = fit_scaling(r, s, np.full(r.size, 1e-2), dim=3)
    scattered = fit_scaling(r, s, np.full(r.size, 1e-9), dim=3)
    assert error_bar_label(exact) == "error bars: certified error bounds"
    assert "model scatter" in error_bar_label(scattered)
    fig = scaling_figure(scattered)
    assert fig.axes[1].get_title(loc="left") == error_bar_label(scattered)


def test_save_figure_renders_each_format_once(tmp_path):
    net = hypercubic((12, 12), mass=0.2)
    fig = region_figure(net, box(net, 3, origin=(2, 2)), region_b=box(net, 3, origin=(7, 7)))
    png, paths = save_figure(fig, tmp_path / "f", ("svg", "png"))
    assert sorted(p.name for p in paths) == ["f.png", "f.svg"]
    assert (tmp_path / "f.png").read_bytes() == png
    svg = (tmp_path / "f.svg").read_text(encoding="utf-8")
    assert "B (9 sites)" in svg  # text kept as text, not glyph paths


def test_save_figure_lays_out_once_and_skips_an_unasked_png(tmp_path):
    net = hypercubic((12, 12), mass=0.2)
    reg = box(net, 3, origin=(2, 2))
    fig = mode_figure(net, reg, [0.8], np.full((1, reg.size), 1 / 3))  # constrained layout
    png, paths = save_figure(fig, tmp_path / "f", ("svg", "pdf"), png=False)
    assert png is None and sorted(p.name for p in paths) == ["f.pdf", "f.svg"]
    assert not (tmp_path / "f.png").exists()
    # the constrained layout of the first rendering is kept for the second
    from matplotlib.layout_engine import PlaceHolderLayoutEngine
    assert isinstance(fig.get_layout_engine(), PlaceHolderLayoutEngine)

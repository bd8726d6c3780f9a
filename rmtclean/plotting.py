"""Figures for benchmarks and spectrum reports (matplotlib, optional).

Every function builds on a :class:`matplotlib.figure.Figure` created
without :mod:`matplotlib.pyplot`, so nothing here depends on a display or
on the global backend: the figures render headless (Agg) and are saved with
:func:`save_figure`. Each plotting function accepts an ``ax`` to draw into
an existing panel and returns the figure.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np

from rmtclean._validation import numerical_rank, rank_tolerance

__all__ = [
    "panel_grid",
    "plot_prial",
    "plot_report",
    "plot_shrinkage",
    "plot_spectrum",
    "save_figure",
]

_INSTALL_HINT = (
    "rmtclean.plotting needs matplotlib, an optional dependency. Install it "
    "with `pip install 'rmtclean[plot]'` (or `pip install matplotlib`)."
)
_REFERENCES = ("oracle", "sample")
# plot_spectrum leaves out eigenvalues beyond this multiple of the bulk edge
# (a market factor 40 times the edge would squeeze the bulk to one bar) and
# counts them in a note instead.
_FAR = 5.0


def _figure_class():
    try:
        from matplotlib.figure import Figure
    except ImportError as exc:
        raise ImportError(_INSTALL_HINT) from exc
    return Figure


def _colour(name: str, names: Sequence[str]) -> str:
    # By position in the caller's list: figures drawn from one list of
    # cleaners give each cleaner the same colour.
    from matplotlib import colormaps

    palette = colormaps["tab10"].colors + colormaps["Dark2"].colors
    return palette[list(names).index(name) % len(palette)]


def panel_grid(
    n_panels: int,
    *,
    ncols: int | None = None,
    panel_size: tuple[float, float] = (4.8, 3.6),
    dpi: float = 100,
):
    """A figure with ``n_panels`` axes on a grid.

    Parameters
    ----------
    n_panels : int
        Number of axes (>= 1).
    ncols : int, optional
        Columns; default ``min(n_panels, 2)``.
    panel_size : (float, float), default=(4.8, 3.6)
        Width and height of one panel in inches.
    dpi : float, default=100
        Resolution: the PNG is ``ncols * width * dpi`` by ``nrows * height
        * dpi`` pixels.

    Returns
    -------
    figure : matplotlib.figure.Figure
    axes : list of matplotlib.axes.Axes
        Exactly ``n_panels`` axes, row by row; unused grid cells are hidden.

    Examples
    --------
    >>> from rmtclean.plotting import panel_grid
    >>> fig, axes = panel_grid(3)
    >>> len(axes), fig.get_size_inches().tolist()
    (3, [9.6, 7.2])
    """
    if isinstance(n_panels, bool) or not isinstance(n_panels, int) or n_panels < 1:
        raise ValueError(
            "The 'n_panels' parameter of panel_grid must be an int >= 1. "
            f"Got {n_panels!r} instead."
        )
    Figure = _figure_class()
    ncols = min(n_panels, 2) if ncols is None else int(ncols)
    nrows = math.ceil(n_panels / ncols)
    fig = Figure(
        figsize=(panel_size[0] * ncols, panel_size[1] * nrows),
        dpi=dpi,
        layout="constrained",
    )
    grid = fig.subplots(nrows, ncols, squeeze=False)
    flat = list(grid.ravel())
    for ax in flat[n_panels:]:
        ax.set_visible(False)
    return fig, flat[:n_panels]


def _single_axes(ax, size=(6.4, 4.8)):
    if ax is not None:
        return ax.figure, ax
    fig, axes = panel_grid(1, panel_size=size)
    return fig, axes[0]


def plot_prial(
    summary: Sequence[Mapping],
    *,
    n_features: int | None = None,
    designs: Sequence[str] | None = None,
    panel_size: tuple[float, float] = (4.8, 3.6),
):
    """PRIAL against T/N, one panel per design, one line per cleaner.

    Parameters
    ----------
    summary : sequence of dict
        Rows of :func:`rmtclean.bench.summarize`: ``design``, ``n_features``,
        ``ratio``, ``cleaner``, ``prial``, ``prial_se``.
    n_features : int, optional
        The N to show; default the largest in ``summary``.
    designs : sequence of str, optional
        Designs to show, in order; default all, in order of appearance.
    panel_size : (float, float), default=(4.8, 3.6)
        Inches per panel.

    Returns
    -------
    matplotlib.figure.Figure

    Notes
    -----
    The oracle (100%) and the sample covariance (0%) are drawn as grey
    reference lines; error bars are one standard error. The vertical axis
    is clipped below at -50% so that one poor cleaner does not flatten the
    others: its points below are drawn on the lower edge as downward
    triangles, each labelled with its value.

    Examples
    --------
    >>> from rmtclean.plotting import plot_prial
    >>> rows = [dict(design="spiked", n_features=50, ratio=r, cleaner="A",
    ...              prial=p, prial_se=1.0) for r, p in [(0.5, 60), (2, 80)]]
    >>> fig = plot_prial(rows)
    >>> fig.axes[0].get_title()
    'spiked, N = 50'
    """
    rows = [dict(r) for r in summary]
    if not rows:
        raise ValueError("The 'summary' argument of plot_prial is empty.")
    if n_features is None:
        n_features = max(r["n_features"] for r in rows)
    rows = [r for r in rows if r["n_features"] == n_features]
    if designs is None:
        designs = list(dict.fromkeys(r["design"] for r in rows))
    if not rows or not designs:
        raise ValueError(
            f"The 'n_features' parameter of plot_prial matches no row. Got "
            f"{n_features!r} instead."
        )
    cleaners = [
        c for c in dict.fromkeys(r["cleaner"] for r in rows) if c not in _REFERENCES
    ]
    fig, axes = panel_grid(len(designs), panel_size=panel_size)
    floor = -50.0
    for ax, design in zip(axes, designs, strict=True):
        drows = [r for r in rows if r["design"] == design]
        ratios = sorted({r["ratio"] for r in drows})
        stacked: dict[float, int] = {}  # labels of clipped points per T / N
        ax.axhline(100.0, color="0.45", lw=1, ls="--", label="oracle (100%)")
        ax.axhline(0.0, color="0.45", lw=1, ls=":", label="sample (0%)")
        for name in cleaners:
            points = sorted(
                (r["ratio"], r["prial"], r.get("prial_se", math.nan))
                for r in drows
                if r["cleaner"] == name and np.isfinite(r["prial"])
            )
            if not points:
                continue
            x, y, se = (np.array(v, dtype=float) for v in zip(*points, strict=True))
            y_shown = np.maximum(y, floor)
            se = np.where(np.isfinite(se), se, 0.0)
            ax.errorbar(
                x,
                y_shown,
                yerr=np.where(y > floor, se, 0.0),
                marker="o",
                ms=4,
                lw=1.4,
                capsize=2,
                color=_colour(name, cleaners),
                label=name,
            )
            for xi, yi in zip(x[y < floor], y[y < floor], strict=True):
                level = stacked.get(float(xi), 0)
                stacked[float(xi)] = level + 1
                ax.plot(xi, floor, marker="v", ms=7, color=_colour(name, cleaners))
                last = xi >= ratios[-1]  # label inside the panel
                ax.annotate(
                    f"{yi:.0f}%",
                    (xi, floor),
                    xytext=(-5 if last else 5, 2 + 10 * level),
                    textcoords="offset points",
                    ha="right" if last else "left",
                    fontsize=6,
                    color=_colour(name, cleaners),
                )
        ax.set_xscale("log")
        ax.set_xticks(ratios, [f"{r:g}" for r in ratios])
        ax.minorticks_off()
        ax.set_ylim(floor - 5, 110)
        ax.set_xlabel("T / N")
        ax.set_ylabel("PRIAL (Frobenius), %")
        ax.set_title(f"{design}, N = {n_features}")
        ax.grid(alpha=0.3)
    axes[0].legend(fontsize=7, loc="lower right", ncols=2)
    return fig


def plot_shrinkage(
    sample_eigenvalues,
    cleaned: Mapping[str, np.ndarray],
    oracle=None,
    *,
    ax=None,
    title: str | None = None,
    scale: str = "auto",
):
    """Cleaned against sample eigenvalues, with the oracle's as reference.

    Parameters
    ----------
    sample_eigenvalues : array-like of shape (N,)
        Sample eigenvalues (any order).
    cleaned : mapping of str to array-like of shape (N,)
        Cleaned eigenvalue of each sample eigenvector, paired with
        ``sample_eigenvalues``, per cleaner.
    oracle : array-like of shape (N,), optional
        The oracle's values :math:`u_i'\\Sigma u_i`, drawn as dots.
    ax : matplotlib.axes.Axes, optional
        Draw here instead of a new figure.
    title : str, optional
    scale : {"auto", "linear", "log"}, default="auto"
        Axis scale of both axes. ``"auto"`` takes ``"log"`` when the positive
        sample eigenvalues span more than a factor 100 (a strong factor
        would otherwise squeeze the bulk into a corner); zero eigenvalues
        (the null space when N > T, and values at rounding-error level left
        by repeated rows or collinear columns) are then not drawn.

    Returns
    -------
    matplotlib.figure.Figure

    Notes
    -----
    The dashed diagonal is "no cleaning"; a cleaner follows the oracle's
    cloud when it shrinks each eigenvalue as far as the truth allows.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.plotting import plot_shrinkage
    >>> s = np.array([3.0, 2.0, 1.0, 0.5])
    >>> fig = plot_shrinkage(s, {"half": s / 2}, oracle=np.ones(4))
    >>> [line.get_label() for line in fig.axes[0].lines][:2]
    ['no cleaning', 'half']
    """
    if scale not in ("auto", "linear", "log"):
        raise ValueError(
            "The 'scale' parameter of plot_shrinkage must be 'auto', 'linear' or "
            f"'log'. Got {scale!r} instead."
        )
    fig, ax = _single_axes(ax)
    sample = np.asarray(sample_eigenvalues, dtype=float).ravel()
    order = np.argsort(sample)
    hi = float(np.max(sample)) if sample.size else 1.0
    # rounding-error values (null space) would stretch a log axis to 1e-16
    nonzero = sample > rank_tolerance(hi, sample.size)
    positive = sample[nonzero]
    if scale == "auto":
        wide = positive.size > 1 and positive.max() > 100 * positive.min()
        scale = "log" if wide else "linear"
    if scale == "log":
        order = order[nonzero[order]]
    lo = float(positive.min()) if (scale == "log" and positive.size) else 0.0
    ax.plot([lo, hi], [lo, hi], color="0.6", ls="--", lw=1, label="no cleaning")
    names = list(cleaned)
    for name in names:
        values = np.asarray(cleaned[name], dtype=float).ravel()
        if values.shape != sample.shape:
            raise ValueError(
                f"The 'cleaned' argument of plot_shrinkage must hold arrays of "
                f"shape {sample.shape}. Got {values.shape} for {name!r}."
            )
        ax.plot(
            sample[order],
            values[order],
            lw=1.4,
            color=_colour(name, names),
            label=name,
        )
    if oracle is not None:
        oracle = np.asarray(oracle, dtype=float).ravel()
        drawn = nonzero if scale == "log" else slice(None)
        ax.scatter(
            sample[drawn],
            oracle[drawn],
            s=9,
            color="black",
            alpha=0.5,
            label="oracle",
            zorder=3,
        )
    if scale == "log":
        ax.set_xscale("log")
        ax.set_yscale("log")
        _no_crowded_minor_labels(ax.xaxis)
        _no_crowded_minor_labels(ax.yaxis)
    else:  # daily-return variances (4e-4): 1e-4 units, not 0.000350 ticks
        ax.ticklabel_format(style="sci", scilimits=(-3, 4))
    ax.set_xlabel("sample eigenvalue")
    ax.set_ylabel("cleaned eigenvalue")
    if title:
        ax.set_title(title)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7, loc="upper left", ncols=2)
    return fig


def _mp_density_of_bulk(bulk, n_samples: float, grid: np.ndarray) -> np.ndarray:
    from rmtclean.laws import MarchenkoPastur

    # fit_bulk's model: the bulk is MP(ratio, s2 (n - k) / n) in the units of
    # the sample eigenvalues (see rmtclean.spectrum.fit_bulk, Notes).
    variance = bulk.noise_variance * (n_samples - bulk.n_signal) / n_samples
    return np.asarray(MarchenkoPastur(bulk.ratio, variance).pdf(grid), dtype=float)


def _unit(level: float) -> float:
    """A power of ten for the axis when eigenvalues are tiny or huge.

    Variances of daily returns (1e-4 to 1e-5) printed in plain units give
    tick labels that run into each other.
    """
    if level <= 0 or 1e-2 <= level < 1e3:
        return 1.0
    return 10.0 ** math.floor(math.log10(level))


def _draw_spectrum(
    ax,
    values,
    n_samples,
    n_features,
    bulk,
    edge,
    notes,
    scale,
    bins,
    ratio=None,
    threshold=None,
):
    """Histogram, fitted density, edge, signal marks and notes on one axes."""
    import textwrap

    k = bulk.n_signal
    if scale == "auto":
        spread = _fit_fails(bulk.statistic, bulk.n_used)
        scale = "log" if spread else "linear"
    # rounding-error values (null space) would stretch a log axis to 1e-16
    positive = values[: numerical_rank(values, n_samples, n_features)]
    weight = 1.0 / (n_features - k)
    if scale == "log":
        unit, far = 1.0, np.empty(0)
        shown, bulk_values = positive, positive[positive <= values[k]]
        count = int(np.clip(2 * math.sqrt(positive.size), 10, 40))
        edges = np.geomspace(positive.min(), positive.max(), count + 1)
        counts, _ = np.histogram(positive, bins=edges)
        density = counts * weight / np.diff(np.log(edges))
        grid = np.geomspace(
            max(bulk.lower_edge, 1e-3 * bulk.upper_edge), bulk.upper_edge, 400
        )[1:-1]
        curve = grid * _mp_density_of_bulk(bulk, n_samples, grid)
        ax.set_xscale("log")
        _no_crowded_minor_labels(ax.xaxis)
        ylabel = "density per unit of log eigenvalue"
    else:
        unit = _unit(edge)
        limit = _FAR * edge
        shown, far = values[values <= limit], values[values > limit]
        bulk_values = values[k:][values[k:] <= limit]
        edges = np.histogram_bin_edges(bulk_values, bins=bins)
        width = edges[1] - edges[0]
        if shown.size and shown.max() > edges[-1]:  # extend bins over the signal
            extra = np.arange(edges[-1] + width, shown.max() + width, width)
            edges = np.concatenate([edges, extra])
        counts, _ = np.histogram(shown, bins=edges)
        density = counts * weight / np.diff(edges)
        grid = np.linspace(bulk.lower_edge, bulk.upper_edge, 400)[1:-1]
        curve = _mp_density_of_bulk(bulk, n_samples, grid)
        edges, density, grid, curve = edges / unit, density * unit, grid / unit, curve
        curve = curve * unit
        ylabel = "density"
    ax.stairs(
        density, edges, fill=True, color="tab:blue", alpha=0.35, label="eigenvalues"
    )
    ax.plot(
        grid,
        curve,
        color="tab:red",
        lw=1.6,
        label=f"Marchenko-Pastur fit (q={ratio or bulk.ratio:.3g}, "
        f"KS {bulk.statistic:.2g})",
    )
    ax.axvline(
        edge / unit, color="tab:red", ls="--", lw=1, label=f"bulk edge {edge:.3g}"
    )
    if threshold is not None and threshold > edge * (1 + 1e-6):
        # the count's cutoff when it lies above the fitted bulk's edge
        ax.axvline(
            threshold / unit,
            color="black",
            ls=":",
            lw=1,
            label=f"signal threshold {threshold:.3g}",
        )
    if k:
        signal = values[:k][values[:k] <= (np.inf if scale == "log" else _FAR * edge)]
        word = "eigenvalue" if k == 1 else "eigenvalues"
        ax.plot(
            signal / unit,
            np.zeros(signal.size),
            "v",
            color="black",
            ms=6,
            clip_on=False,
            label=f"{k} signal {word}",
        )
    if far.size:
        ax.annotate(
            f"{far.size} beyond, up to {far.max():.3g} \u2192",
            xy=(0.98, 0.5),
            xycoords="axes fraction",
            ha="right",
            va="center",
            fontsize=8,
        )
    if notes:
        # Under the axes, where it hides no data; constrained layout makes room.
        text = "\n".join(textwrap.fill(f"warning: {note}", 78) for note in notes)
        ax.annotate(
            text,
            xy=(0.0, 0.0),
            xycoords=("axes fraction", ax.xaxis.label),
            xytext=(0, -3),
            textcoords="offset points",
            ha="left",
            va="top",
            fontsize=6.5,
            color="darkred",
        )
    xlabel = "sample eigenvalue"
    if unit != 1.0:
        xlabel += f" (units of {unit:.0e})"
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    ax.legend(fontsize=7, loc="upper right")


def _fit_fails(statistic, n_used):
    from rmtclean.spectrum._report import fit_fails

    return fit_fails(statistic, n_used)


def plot_spectrum(
    eigenvalues,
    n_samples: float,
    n_features: int,
    *,
    bulk=None,
    n_signal: int | None = None,
    bins: int | str = "auto",
    ax=None,
    title: str | None = None,
    scale: str = "auto",
):
    """Histogram of a sample spectrum with the fitted Marchenko-Pastur density.

    Parameters
    ----------
    eigenvalues : array-like of shape (n_components,)
        Nonzero sample eigenvalues, descending; when ``n_features >
        n_samples`` the null space's zeros are implicit and not drawn.
    n_samples : float
        Degrees of freedom of the sample covariance (``T - 1`` after
        demeaning).
    n_features : int
        Dimension N.
    bulk : rmtclean.spectrum.BulkFit, optional
        A bulk fit to draw; by default :func:`rmtclean.spectrum.fit_bulk`
        with ``n_signal`` set aside.
    n_signal : int, optional
        Eigenvalues set aside as signal before the fit; by default
        :func:`rmtclean.spectrum.detect_signal` decides.
    bins : int or str, default="auto"
        Histogram bins on a linear axis, as for
        :func:`numpy.histogram_bin_edges`.
    ax : matplotlib.axes.Axes, optional
    title : str, optional
    scale : {"auto", "linear", "log"}, default="auto"
        Eigenvalue axis. ``"auto"`` takes ``"log"`` when the fitted law does
        not describe the bulk (its Kolmogorov-Smirnov distance above the
        warning level of :func:`rmtclean.analyze_spectrum`): the spectrum then
        spreads over decades that a linear axis squeezes into one bar.

    Returns
    -------
    matplotlib.figure.Figure

    See Also
    --------
    plot_report : the same figure for a :class:`~rmtclean.SpectrumReport`.

    Notes
    -----
    Each eigenvalue carries weight :math:`1/(N - k)` (``k`` signal
    eigenvalues), so the bulk's bars have the area of the continuous part
    of the fitted law, :math:`\\min(1, 1/q)` for ratio :math:`q`: the curve
    and the bars are on the same scale for N > T as well. On a log axis
    both are densities per unit of :math:`\\log\\lambda` (the curve is
    :math:`\\lambda f(\\lambda)`). Signal eigenvalues are marked on the axis;
    the vertical line is the fitted upper edge of the bulk. On a linear axis
    eigenvalues beyond 5 times that edge are left out and counted in a note
    on the right, and tiny or huge eigenvalues (daily-return variances) are
    drawn in units of a power of ten named in the axis label.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.plotting import plot_spectrum
    >>> X = np.random.default_rng(0).standard_normal((400, 100))
    >>> values = np.linalg.eigvalsh(np.cov(X, rowvar=False))[::-1]
    >>> fig = plot_spectrum(values, 399, 100)
    >>> fig.axes[0].get_xlabel()
    'sample eigenvalue'
    """
    from rmtclean.spectrum import detect_signal, fit_bulk

    _check_scale(scale, "plot_spectrum")
    fig, ax = _single_axes(ax)
    values = np.asarray(eigenvalues, dtype=float).ravel()
    if bulk is None:
        if n_signal is None:
            n_signal = detect_signal(values, n_samples, n_features).n_signal
        bulk = fit_bulk(values, n_samples, n_features, n_signal=n_signal)
    _draw_spectrum(
        ax, values, n_samples, n_features, bulk, bulk.upper_edge, (), scale, bins
    )
    if title:
        ax.set_title(title)
    return fig


def plot_report(report, *, ax=None, title: str | None = None, scale: str = "auto"):
    """The figure of a spectrum report: what it counts and how well it fits.

    Parameters
    ----------
    report : rmtclean.SpectrumReport
        From :func:`rmtclean.analyze_spectrum` or
        :func:`rmtclean.spectrum.spectrum_report`.
    ax : matplotlib.axes.Axes, optional
    title : str, optional
    scale : {"auto", "linear", "log"}, default="auto"
        As for :func:`plot_spectrum`; ``"auto"`` takes ``"log"`` when the
        report warns that the fitted law does not describe the spectrum.

    Returns
    -------
    matplotlib.figure.Figure

    Notes
    -----
    The histogram of the sample eigenvalues, the Marchenko-Pastur law fitted
    to the bulk with the ``n_signal`` signal eigenvalues set aside (its ratio
    and Kolmogorov-Smirnov distance in the legend), the report's bulk edge,
    the signal eigenvalues marked on the axis ("15 signal eigenvalues") and
    the report's warnings written on the figure.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean import analyze_spectrum
    >>> from rmtclean.plotting import plot_report
    >>> rng = np.random.default_rng(0)
    >>> X = rng.standard_normal((400, 100)) * np.r_[3.0, np.ones(99)]
    >>> fig = plot_report(analyze_spectrum(X))
    >>> [line.get_label() for line in fig.axes[0].lines][-1]
    '1 signal eigenvalue'
    """
    from rmtclean.spectrum import fit_bulk

    _check_scale(scale, "plot_report")
    fig, ax = _single_axes(ax)
    n, n_features = report.degrees_of_freedom, report.n_features
    values = np.asarray(report.eigenvalues, dtype=float)
    bulk = fit_bulk(values, n, n_features, n_signal=report.n_signal)
    if scale == "auto":
        scale = "log" if report.warnings else "linear"
    _draw_spectrum(
        ax,
        values,
        n,
        n_features,
        bulk,
        report.bulk_edge,
        report.warnings,
        scale,
        "auto",
        report.ratio,
        report.threshold,
    )
    if title:
        ax.set_title(title)
    return fig


def _no_crowded_minor_labels(axis) -> None:
    """No labels on the minor ticks of a log axis (spans under a decade
    label them all, in 10^x notation that runs into each other)."""
    from matplotlib.ticker import NullFormatter

    axis.set_minor_formatter(NullFormatter())


def _check_scale(scale, function: str) -> None:
    if scale not in ("auto", "linear", "log"):
        raise ValueError(
            f"The 'scale' parameter of {function} must be 'auto', 'linear' or "
            f"'log'. Got {scale!r} instead."
        )


def save_figure(fig, path, *, dpi: float | None = None) -> Path:
    """Save ``fig`` as a PNG of exactly its size in pixels.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    path : str or Path
        Target file; parent directories are created.
    dpi : float, optional
        Default the figure's own; the PNG is ``size_inches * dpi`` pixels
        (no tight bounding box, so the size is predictable).

    Returns
    -------
    Path

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from rmtclean.plotting import panel_grid, save_figure
    >>> fig, _ = panel_grid(1)
    >>> path = save_figure(fig, pathlib.Path(tempfile.mkdtemp()) / "a.png")
    >>> path.stat().st_size > 0
    True
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fig.savefig(path, format="png", dpi=fig.dpi if dpi is None else dpi)
    return path

"""The figure of ``rmtclean clean --report``: the spectrum and the cleaning."""

from __future__ import annotations

from pathlib import Path

from rmtclean._cli_messages import chosen_fit

__all__ = ["report_figure", "save_figure"]


def report_figure(est, report, frame, args):
    import numpy as np

    from rmtclean.plotting import panel_grid, plot_report, plot_shrinkage

    n_features = frame.shape[1]
    # Taller than the default panels: the report's warnings go below the
    # left one and must not squeeze it under its axis label.
    fig, (left, right) = panel_grid(2, panel_size=(4.8, 4.6))
    what = "correlation" if report.standardized else "covariance"
    dof = report.degrees_of_freedom
    plot_report(
        report,
        ax=left,
        title=f"sample {what} spectrum\nN={n_features}, T={frame.shape[0]}, "
        f"dof={dof:.6g}",
    )
    label = args.method
    if hasattr(est, "describe_choice"):  # AutoShrink: the cleaner it chose
        fit = chosen_fit(est)
        n_used = int(np.count_nonzero(est.weights_ > 0))
        chosen = f"blend of {n_used}" if fit is est else type(fit).__name__
        if est.spherical_:  # John's test did not reject a multiple of I
            chosen = "a multiple of I"
        label += f" (chose {chosen})"
    if getattr(est, "scale_estimate", None) == "robust":  # said on the curve
        level = est.eigenvalues_.sum() / est.sample_eigenvalues_.sum()
        label += f" (robust level: {level:.2f} of the sample's)"
    plot_shrinkage(
        est.sample_eigenvalues_,
        {label: est.eigenvalues_},
        ax=right,
        title=f"{args.method}: cleaned vs sample eigenvalues",
    )
    import textwrap

    from rmtclean.demo import CAUTION

    fig.supxlabel(textwrap.fill(CAUTION, 150), fontsize=6.5, color="0.3")
    return fig


def save_figure(fig, target) -> None:
    from rmtclean.io import atomic_path

    path = Path(target)
    with atomic_path(path) as tmp:
        fig.savefig(
            tmp, format=path.suffix.lstrip(".").lower() or "png", bbox_inches="tight"
        )

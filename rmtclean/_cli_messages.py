"""Messages of the ``rmtclean`` command: library words turned into the CLI's.

Library errors and warnings name Python parameters (``The 'half_life'
parameter of EigenClip``, ``missing='em'``) and 0-based column positions;
the command line knows flags and the file's column names. Every warning
becomes one line ``rmtclean COMMAND: warning: ...`` on standard error.
"""

from __future__ import annotations

import re
import sys
import warnings

__all__ = [
    "FLAGS",
    "STEPS",
    "WarningLines",
    "chosen_fit",
    "cli_language",
    "degrees_of_freedom",
    "level_note",
    "split_note",
    "variance_note",
    "plural",
    "warn",
]


# Python parameter -> the flag that sets it, for messages.
FLAGS = {
    "half_life": "--half-life",
    "vol_half_life": "--vol-half-life",
    "missing": "--missing",
    "standardize": "--standardize",
    "random_state": "--seed",
    "scale_estimate": "--sample-level",
    "n_splits": "--splits",
}


# Library function -> the step of the command it is, for messages.
STEPS = {
    "analyze_spectrum": "the spectrum report",
    "pairwise_covariance": "--missing pairwise",
    "em_covariance": "--missing em",
}


def plural(n: int, word: str) -> str:
    """``1 variable``, ``2 variables``."""
    return f"{n} {word}" + ("" if n == 1 else "s")


def warn(args, text: str) -> None:
    """One ``rmtclean COMMAND: warning: ...`` line on standard error.

    A rank-deficiency warning that the constant or repeated columns named
    before fully explain is not said again (``args.known_zeros``). When
    ``args.said`` is a list, the text is appended to it too.
    """
    text = _rank_words(text, getattr(args, "known_zeros", None))
    if text:
        print(f"rmtclean {args.command}: warning: {text}", file=sys.stderr)
        if isinstance(getattr(args, "said", None), list):  # analyze --json
            args.said.append(text)


def _rank_words(text: str, known) -> str | None:
    """``text``, or ``None`` when its zero eigenvalues are all explained.

    ``known`` is ``(columns explained, N, rows repeated, T)``: the ``k``
    constant and repeated columns and the ``r`` repeated rows leave the
    rank at ``min(N - k, allowed - r + max(0, T - 1 - allowed))`` of the
    ``allowed`` nonzero sample eigenvalues (rows bind only when ``T - 1 -
    r`` falls below the rest).
    """
    match = re.match(r"the data are rank deficient\b.*?(\d+) of the (\d+) ", text)
    if not match or not known or not (known[0] or known[2]):
        return text
    n_zero, allowed = int(match.group(1)), int(match.group(2))
    k, n_features, r, n_rows = known
    rank = min(n_features - k, allowed - r + max(0, n_rows - 1 - allowed))
    expected = max(0, allowed - rank)
    if n_zero == expected:
        return None
    if expected:
        return (
            f"{text} ({expected} of them from the constant or repeated columns or rows)"
        )
    return text


def cli_language(message: str, columns=None, flags=None) -> str:
    """``message`` on one line, with flags for parameters and names for columns.

    Library messages name Python parameters (``The 'half_life' parameter of
    EigenClip``, ``missing='em'``) and 0-based column positions; the command
    line knows flags and the file's column names.

    Parameters
    ----------
    message : str or Exception
    columns : sequence, optional
        The data's column names, replacing 0-based positions.
    flags : dict, optional
        Parameter name -> flag of the running command (its options' ``dest``
        -> option string), on top of :data:`FLAGS`.
    """
    text = " ".join(str(message).split())
    known = {**(flags or {}), **FLAGS}
    text = re.sub(
        r"\b(\w+)(?= needs )", lambda m: STEPS.get(m.group(1), m.group(1)), text
    )

    def flag(match):
        return known.get(match.group(1), match.group(0))

    text = re.sub(r"The '(\w+)' parameter of \w+(?:\.\w+)?", flag, text)
    text = re.sub(r"^[A-Z]\w*\.fit: ", "", text)  # the method is on the command
    text = re.sub(
        r"\b(\w+)='([^']*)'",
        lambda m: (
            f"{known[m.group(1)]} {m.group(2)}" if m.group(1) in known else m.group(0)
        ),
        text,
    )
    text = re.sub(
        r"\b(\w+)=True\b",
        lambda m: known.get(m.group(1), m.group(0)),
        text,
    )
    text = re.sub(
        r"(?<![-\w'])(half_life|vol_half_life)\b", lambda m: FLAGS[m.group(1)], text
    )
    # The CLI's lines continue "error: " or "warning: " in lower case; names
    # (TylerShrink, Marchenko-Pastur) keep theirs.
    text = re.sub(r"^(The|No|Cannot|A|An|Got|Expected) ", _lower_word, text)
    if columns is not None:
        names = [str(c) for c in columns]

        def name(match):
            j = int(match.group(2))
            return f"{match.group(1)}{names[j]!r}" if j < len(names) else match.group(0)

        text = re.sub(r"(first )index (\d+)\b", name, text)
        text = re.sub(r"(columns? )(\d+)\b", name, text)
        text = re.sub(r"(\band )(\d+)(?= share\b)", name, text)
    return text


def _lower_word(match) -> str:
    return match.group(0).lower()


class WarningLines(warnings.catch_warnings):
    """Show each library warning once, as one line in the CLI's language."""

    def __init__(self, args):
        super().__init__()
        self._args = args
        self._seen = set()

    def __enter__(self):
        out = super().__enter__()
        warnings.showwarning = self._show
        return out

    def _show(self, message, category, filename, lineno, file=None, line=None):
        text = cli_language(
            message,
            getattr(self._args, "columns", None),
            getattr(self._args, "flags", None),
        )
        if text not in self._seen:
            self._seen.add(text)
            warn(self._args, text)


def degrees_of_freedom(est) -> tuple[float, float]:
    """The data's degrees of freedom and the estimator's divisor of S.

    Equal but for LinearShrink's ``bias=True`` (scikit-learn's divisor T,
    kept in ``degrees_of_freedom_``): the report and the printed line use
    the data's ``T - 1`` (with --half-life: Kish's effective sample size
    less one) for every method.
    """
    inner = getattr(est, "best_estimator_", est)
    divisor = float(est.degrees_of_freedom_)
    biased = getattr(inner, "bias", False) and not getattr(
        inner, "assume_centered", False
    )
    return (divisor - 1.0 if biased else divisor), divisor


def chosen_fit(est):
    """The fit whose settings the written matrix follows.

    AutoShrink's chosen cleaner when it selected one (``best_estimator_``),
    else ``est`` itself: any other cleaner, or a blend of several.
    """
    if getattr(est, "blend_score_", None) is None:
        return getattr(est, "best_estimator_", est)
    return est


def level_note(est) -> str | None:
    """What a robust variance level does to the written covariance, if used.

    TylerShrink's default level is that of the Gaussian law with the same
    median row norm: with heavy tails it lies below the variance (daily
    returns: about 0.6 of it), which a risk forecast must know. The ratio is
    that of the cleaned to the sample eigenvalues, in the space cleaned (the
    correlation under --standardize or --vol-half-life), as on the figure.
    """
    inner = chosen_fit(est)
    if getattr(inner, "scale_estimate", None) != "robust":
        return None
    ratio = float(est.eigenvalues_.sum() / est.sample_eigenvalues_.sum())
    keep = "--sample-level" if inner is est else "--method tyler --sample-level"
    why = (
        ": with heavy tails the robust level lies below the variance"
        if ratio < 1.0
        else ""
    )
    return (
        f"variance level: robust (median row norm), {ratio:.2f} times the "
        f"sample's{why}; {keep} keeps the sample's level"
    )


#: Factor by which a cleaned variance may move from the sample's unsaid.
VARIANCE_FACTOR = 2.0


def variance_note(est, matrix, frame, args) -> str | None:
    """Say when cleaning the covariance moved column variances far.

    A cleaner pulls the eigenvalues together; when the variances of the
    columns span orders of magnitude (gene expression) that lifts the
    low-variance columns several times over (KernelShrink on the tissue
    panel: up to 4.7 times). Cleaning the correlation then scaling it back
    (``--standardize --kind covariance``) is the common practice for such
    data. Only for the covariance of the raw columns (no --standardize, no
    --vol-half-life).
    TylerShrink's robust level can leave the total unchanged and still move
    single variances several times over (tissue panel: 0.63 to 4.7), so it
    is checked too.
    """
    import numpy as np

    if args.standardize or getattr(args, "vol_half_life", None) is not None:
        return None
    X = frame.to_numpy(dtype=np.float64)
    if args.half_life is not None:
        from rmtclean.weights import half_life_weights

        w = half_life_weights(X.shape[0], args.half_life)
        mean = np.average(X, axis=0, weights=w)
        sample = np.average((X - mean) ** 2, axis=0, weights=w)
    else:
        sample = np.nanvar(X, axis=0, ddof=1)
    cleaned = np.diag(matrix.to_numpy())  # the covariance written
    varies = sample > 0
    if varies.sum() < 2:
        return None
    ratio = cleaned[varies] / sample[varies]
    far = np.flatnonzero((ratio > VARIANCE_FACTOR) | (ratio < 1.0 / VARIANCE_FACTOR))
    if not far.size:
        return None
    names = np.asarray(frame.columns)[varies]
    worst = far[np.argsort(-np.abs(np.log(ratio[far])))][:3]
    shown = ", ".join(f"{names[j]!r} {ratio[j]:.2g}x" for j in worst)
    spread = sample[varies].max() / sample[varies].min()
    return (
        f"cleaning the covariance moved {plural(far.size, 'column variance')} "
        f"by more than a factor {VARIANCE_FACTOR:g} ({shown}"
        f"{' ...' if far.size > 3 else ''}): the column variances span a "
        f"factor {spread:.3g} and the cleaner pulls the eigenvalues together; "
        "--standardize --kind covariance cleans the correlation and scales "
        "it back by the sample standard deviations."
    )


def split_note(est) -> str | None:
    """How much another --seed would move a SplitShrink fit (or AutoShrink's).

    Two seeds give fits about ``sqrt(2)`` times ``split_error_`` apart
    (relative Frobenius); on French's 49 industries over 500 days, about
    12% with the default 10 splits, as much as SplitShrink differs from
    KernelShrink there.
    """
    import math

    fit = chosen_fit(est)
    error = getattr(fit, "split_error_", None)
    if not error:  # None (one split) or 0.0 (splits not random)
        return None
    n_splits = fit.n_splits
    method = "" if fit is est else "--method split "
    flags = f"{method}--splits {4 * n_splits}"
    return (
        f"random splits: another --seed moves the cleaned eigenvalues by about "
        f"{math.sqrt(2.0) * error:.1%} (Frobenius, the Monte-Carlo error of "
        f"{n_splits} splits); {flags} halves it"
    )

"""The shared parts of the estimators' numpydoc docstrings.

Each cleaner's docstring is a template: ``%(common)s`` stands for the
common Parameters entries, ``%(fitted)s`` and ``%(fitted_end)s`` for the
Attributes entries every cleaner has (``%(stored)s`` for the first three
of them alone), ``%(report_count)s`` for the
``n_signal_`` entry of a rule that uses no signal count;
:func:`estimator_doc` fills them. It also gives the cleaner the References
of the rule it applies: their sources are cited once, in the rule's
docstring.
"""

from __future__ import annotations

import re

__all__ = [
    "FITTED_DOC",
    "FITTED_END_DOC",
    "REPORT_COUNT_DOC",
    "STORED_DOC",
    "common_params_doc",
    "estimator_doc",
    "references_doc",
    "with_references",
]

_COMMON_DOC = """
    store_precision : bool, default=True
        Store the dense precision matrix ``precision_`` (when the covariance
        is stored densely). It is formed from ``spectrum_`` on first access
        and then kept; ``get_precision()`` returns the same array.
    assume_centered : bool, default=False
        If True, the data are not demeaned and the sample covariance uses
        ``T`` degrees of freedom instead of ``T - 1``.
    standardize : bool, default=False
        Clean the correlation matrix, then scale it back by the sample
        standard deviations: ``covariance_ = D R D`` with ``D`` their
        diagonal matrix and ``R`` the cleaned correlation. The diagonal of
        ``R`` is near one, not exactly one, so the variances are near the
        sample's rather than equal to them.
    route : {"auto", "dense", "gram"}, default="auto"
        How the sample spectrum is computed: ``"dense"`` forms the N x N
        sample covariance and calls ``eigh``; ``"gram"`` diagonalises the
        T x T Gram matrix of the data and never forms an N x N matrix. ``"auto"`` uses
        ``"gram"`` when N exceeds the number of samples or 5,000.
    store_covariance : "auto" or bool, default="auto"
        Whether ``covariance_`` (and ``precision_``) are stored as dense
        N x N arrays (8 N^2 bytes each). ``"auto"`` stores them up to
        N = 5,000. Otherwise they are ``None``, and ``spectrum_`` (a
        :class:`~rmtclean.spectrum.CleanedSpectrum`) serves ``score``,
        ``mahalanobis``, ``transform`` and ``spectrum_.solve/logdet``
        without an N x N array.
    half_life : float or None, default=None
        Weight the rows (in time order, oldest first) by
        ``2 ** (-age / half_life)``, the newest row weight 1. The rules then
        see Kish's effective sample size ``n_eff = (sum w)^2 / sum w^2`` in
        place of ``T``: ``degrees_of_freedom_ = n_eff - 1`` (``n_eff`` if
        ``assume_centered``), and the Marchenko-Pastur ratio is ``N / dof``.
        Combines with ``sample_weight`` (frequency weights) as in
        :func:`rmtclean.weights.kish_weights`.
    missing : {"error", "pairwise", "em"}, default="error"
        What to do with NaN entries in ``X``. ``"error"`` raises.
        ``"pairwise"`` cleans the pairwise-deletion covariance, ``"em"`` the
        Gaussian EM estimate (see :mod:`rmtclean.missing`); the cleaned
        eigenvalues are floored at ``1e-8`` times their mean, so the result
        is positive definite. Caveats: the rules were derived for complete
        data and receive a heuristic sample size (the mean number of rows two
        columns share, less one); pairwise estimates can be indefinite before
        cleaning (negative eigenvalues are set to zero); neither weights nor
        cleaners that need the data rows are supported.
    vol_half_life : float or None, default=None
        Devolatilise each series before cleaning (for returns whose
        volatility changes over time): each column is divided by its causal
        exponentially weighted volatility with this half-life in rows
        (:func:`rmtclean.volatility.ewma_volatility`: from earlier rows
        only, the recursion seeded on the mean square of the first
        ``min(T, 20)`` rows), the cleaner runs on the correlation of the
        scaled series, and ``covariance_ = V R V`` with ``R`` that cleaned
        correlation and ``V = diag(volatility_)`` the volatility forecast
        for the row after the last. ``standardize`` is then implied; the
        series are demeaned first unless ``assume_centered``. Not with
        dask arrays or NaN entries. RiskMetrics' daily ``lambda = 0.94`` is
        a half-life of 11.2 rows.
"""

#: The Attributes entries of the dense matrices and the location (the
#: ``%(stored)s`` line of a template whose spectral entries are its own).
STORED_DOC = """    covariance_ : ndarray of shape (n_features, n_features) or None
        The cleaned covariance (None when not stored densely).
    precision_ : ndarray of shape (n_features, n_features) or None
        Its inverse (when stored).
    location_ : ndarray of shape (n_features,)
        The column means (zeros when ``assume_centered``).
"""

#: The Attributes entries every cleaner's docstring starts with (the
#: ``%(fitted)s`` line of its template): :data:`STORED_DOC`, then the spectra.
FITTED_DOC = (
    STORED_DOC
    + """    spectrum_ : CleanedSpectrum
        The cleaned covariance in spectral form.
    sample_eigenvalues_ : ndarray of shape (n_features,)
        Descending sample eigenvalues (of the correlation when
        ``standardize``), the null space's zeros last.
"""
)

#: The ``n_signal_`` entry of a cleaner whose rule uses no signal count (its
#: ``%(report_count)s`` line): the count comes from ``_report_count``.
REPORT_COUNT_DOC = """    n_signal_ : int or None
        The signal count of :func:`rmtclean.analyze_spectrum` on the same
        sample spectrum (the rule does not use it; one count per data set).
        None when there are fewer than 3 nonzero eigenvalues or degrees of
        freedom.
"""

#: The Attributes entries every cleaner's docstring ends with (its
#: ``%(fitted_end)s`` line).
FITTED_END_DOC = """    scale_ : ndarray of shape (n_features,) or None
        The column scales restored: standard deviations with
        ``standardize``, ``volatility_`` with ``vol_half_life``.
    volatility_ : ndarray of shape (n_features,) or None
        The volatility forecast for the next row (``vol_half_life`` only).
    n_features_in_ : int
    feature_names_in_ : ndarray of shape (n_features_in_,)
"""


def common_params_doc(exclude: tuple[str, ...] = ()) -> str:
    """The Parameters entries shared by every estimator (for docstrings).

    ``exclude`` names entries to leave out (parameters a class does not take).
    """
    if not exclude:
        return _COMMON_DOC
    entries = re.split(r"\n(?=    \w+ : )", _COMMON_DOC)
    kept = [e for e in entries if e.strip().split(" :")[0] not in exclude]
    return "\n".join(kept)


#: The entries of a numpydoc References section (up to the blank line).
_REFERENCES = re.compile(r"\n    References\n    -+\n(.*?\n)\s*\n", re.DOTALL)


def references_doc(function) -> str:
    """The References entries of ``function``'s docstring ("" without any).

    The entries keep their numbers and their indentation (a function's
    docstring and a class template are both indented by four spaces).
    """
    match = _REFERENCES.search(function.__doc__ or "")
    return "" if match is None else match.group(1)


_REFERENCES_HEADER = "    References\n    ----------\n"


def with_references(doc: str, function) -> str:
    """``doc`` with the References entries of ``function``'s docstring first.

    They go at the top of the References section of ``doc`` (whose own
    entries are numbered after them), or make a References section before
    the Examples when ``doc`` has none.
    """
    entries = references_doc(function)
    if _REFERENCES_HEADER in doc:
        return doc.replace(_REFERENCES_HEADER, _REFERENCES_HEADER + entries, 1)
    examples = "    Examples\n    --------\n"
    return doc.replace(examples, _REFERENCES_HEADER + entries + "\n" + examples, 1)


def estimator_doc(doc: str, exclude: tuple[str, ...] = (), references=None) -> str:
    """A cleaner's docstring from its template: ``%(common)s`` becomes the
    common Parameters entries (less ``exclude``), ``%(fitted)s`` and
    ``%(fitted_end)s`` the common Attributes entries (``%(stored)s`` the
    first three of them), ``%(report_count)s`` the ``n_signal_`` entry of a
    rule that uses no signal count; the References entries of the rule
    function ``references`` come first in the References section
    (:func:`with_references`)."""
    if references is not None:
        doc = with_references(doc, references)
    return (
        doc.replace("%(fitted)s\n", FITTED_DOC)
        .replace("%(stored)s\n", STORED_DOC)
        .replace("%(fitted_end)s\n", FITTED_END_DOC)
        .replace("%(report_count)s\n", REPORT_COUNT_DOC)
        .replace("%(common)s", common_params_doc(exclude).rstrip("\n"))
    )

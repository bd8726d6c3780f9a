"""Population covariances with a known truth, and samplers that match them.

A :class:`Design` is a population covariance stored by its eigenvalues
(descending) and eigenvectors. :func:`make_design` builds one by name from
the registry :data:`DESIGNS`; :meth:`Design.sample` draws data whose
population covariance is exactly the design's, with Gaussian, Student-t,
multivariate-t or Rademacher entries, optionally AR(1)-correlated in time.
"""

from __future__ import annotations

import numbers
from dataclasses import dataclass, field
from functools import cached_property
from types import MappingProxyType

import numpy as np
import scipy.linalg

from rmtclean._validation import Interval, check_value

__all__ = ["DESIGNS", "DISTRIBUTIONS", "Design", "make_design", "random_rotation"]

DISTRIBUTIONS = ("gaussian", "student-t", "multivariate-t", "rademacher")


def _rng(random_state) -> np.random.Generator:
    if random_state is None or isinstance(
        random_state, (numbers.Integral, np.random.Generator)
    ):
        if isinstance(random_state, bool):
            raise TypeError("random_state must be None, an int or a Generator.")
        return np.random.default_rng(random_state)
    raise TypeError(
        "random_state must be None, an int or a numpy Generator. Got "
        f"{type(random_state).__name__} instead."
    )


def _readonly(a: np.ndarray) -> np.ndarray:
    a = np.array(a, dtype=np.float64)
    a.setflags(write=False)
    return a


def random_rotation(n_features: int, random_state=None) -> np.ndarray:
    r"""Draw a Haar-distributed (uniform) random orthogonal matrix.

    Parameters
    ----------
    n_features : int
        Size of the matrix.
    random_state : None, int or numpy.random.Generator, default=None
        Seed or generator.

    Returns
    -------
    rotation : ndarray of shape (n_features, n_features)
        Orthogonal matrix.

    Notes
    -----
    The Q factor of a Gaussian matrix, with each column's sign chosen so
    that the diagonal of R is positive; without that fix the Q of a
    Householder QR is not Haar distributed [1]_.

    References
    ----------
    .. [1] F. Mezzadri, "How to generate random matrices from the classical
       compact groups", Notices of the AMS 54(5), 592-604, 2007.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.synthetic import random_rotation
    >>> q = random_rotation(4, random_state=0)
    >>> bool(np.allclose(q.T @ q, np.eye(4)))
    True
    """
    n_features = _check_int(n_features, "n_features", "random_rotation", low=1)
    gauss = _rng(random_state).standard_normal((n_features, n_features))
    q, r = np.linalg.qr(gauss)
    signs = np.sign(np.diag(r))
    signs[signs == 0] = 1.0
    return q * signs


# ------------------------------------------------------------------ checks
def _check_int(value, name: str, owner: str, *, low: int) -> int:
    check_value(value, [Interval(int, low, None)], name, owner)
    return int(value)


def _check_real(
    value, name: str, owner: str, *, low=None, high=None, closed="neither"
) -> float:
    check_value(value, [Interval(float, low, high, closed)], name, owner)
    if not np.isfinite(value):
        raise ValueError(
            f"The '{name}' parameter of {owner} must be finite. Got {value!r} instead."
        )
    return float(value)


def _check_positive_vector(values, name: str, owner: str) -> np.ndarray:
    arr = np.asarray(values, dtype=np.float64).ravel()
    if arr.size == 0 or not np.all(np.isfinite(arr)) or np.any(arr <= 0):
        raise ValueError(
            f"The '{name}' parameter of {owner} must be a non-empty sequence of "
            f"positive finite floats. Got {values!r} instead."
        )
    return arr


# ------------------------------------------------------------------ designs
@dataclass(frozen=True, eq=False)
class Design:
    r"""A population covariance with known eigen-decomposition.

    Build one with :func:`make_design`; the constructor does not validate.

    Attributes
    ----------
    name : str
        Registry name of the design.
    eigenvalues : ndarray of shape (n_features,)
        Population eigenvalues, descending (read-only).
    eigenvectors : ndarray of shape (n_features, n_features) or None
        Matching orthonormal eigenvectors as columns (read-only); ``None``
        means the standard basis, so that the covariance is
        ``diag(eigenvalues)``.
    params : mapping
        The parameters the design was built with.

    Examples
    --------
    >>> from rmtclean.synthetic import make_design
    >>> design = make_design("spiked", 4, spikes=[5.0])
    >>> design.eigenvalues
    array([5., 1., 1., 1.])
    >>> design.sample(3, random_state=0).shape
    (3, 4)
    """

    name: str
    eigenvalues: np.ndarray
    eigenvectors: np.ndarray | None = None
    params: MappingProxyType = field(default_factory=lambda: MappingProxyType({}))

    @property
    def n_features(self) -> int:
        """Dimension of the design."""
        return self.eigenvalues.shape[0]

    @cached_property
    def covariance(self) -> np.ndarray:
        """Population covariance, shape (n_features, n_features), read-only."""
        if self.eigenvectors is None:
            return _readonly(np.diag(self.eigenvalues))
        v = self.eigenvectors
        cov = (v * self.eigenvalues) @ v.T
        return _readonly((cov + cov.T) / 2)

    @cached_property
    def precision(self) -> np.ndarray:
        """Inverse of the population covariance, read-only."""
        if self.eigenvectors is None:
            return _readonly(np.diag(1.0 / self.eigenvalues))
        v = self.eigenvectors
        prec = (v / self.eigenvalues) @ v.T
        return _readonly((prec + prec.T) / 2)

    @cached_property
    def _sqrt_covariance(self) -> np.ndarray:
        # Symmetric square root V diag(sqrt(l)) V'.
        root = np.sqrt(self.eigenvalues)
        if self.eigenvectors is None:
            return _readonly(np.diag(root))
        v = self.eigenvectors
        return _readonly((v * root) @ v.T)

    def sample(
        self,
        n_samples: int,
        *,
        distribution: str = "gaussian",
        df: float | None = None,
        ar_coefficient: float = 0.0,
        random_state=None,
    ) -> np.ndarray:
        r"""Draw mean-zero samples whose population covariance is the design's.

        Parameters
        ----------
        n_samples : int
            Number of samples (rows).
        distribution : {"gaussian", "student-t", "multivariate-t", \
"rademacher"}, default="gaussian"
            Law of the white entries :math:`z` before colouring:
            ``"gaussian"`` standard normal; ``"student-t"`` independent
            Student-t entries; ``"multivariate-t"`` one common chi-square
            scale per row (an elliptical law with tail dependence across
            features); ``"rademacher"`` independent +/-1 entries.
        df : float, default=None
            Degrees of freedom of the t laws, > 2 (finite variance). Required
            for them, not allowed otherwise.
        ar_coefficient : float, default=0.0
            :math:`\phi \in (-1, 1)`: the white rows follow
            :math:`z_t = \phi z_{t-1} + \sqrt{1-\phi^2}\,e_t`, started at
            :math:`z_0 = e_0`, so that each row keeps identity covariance
            while successive rows are correlated (lag-:math:`h`
            autocovariance :math:`\phi^{|h|}\Sigma`).
        random_state : None, int or numpy.random.Generator, default=None
            Seed or generator.

        Returns
        -------
        X : ndarray of shape (n_samples, n_features)
            :math:`X = Z\Sigma^{1/2}` with :math:`\Sigma^{1/2}` the symmetric
            square root and :math:`Z` white with unit-variance entries (t
            entries are scaled by :math:`\sqrt{(\nu - 2)/\nu}`).

        Examples
        --------
        >>> from rmtclean.synthetic import make_design
        >>> X = make_design("toeplitz", 3, rho=0.5).sample(
        ...     4, distribution="student-t", df=5, random_state=0)
        >>> X.shape
        (4, 3)
        """
        owner = "Design.sample"
        n_samples = _check_int(n_samples, "n_samples", owner, low=1)
        if distribution not in DISTRIBUTIONS:
            raise ValueError(
                f"The 'distribution' parameter of {owner} must be one of "
                f"{DISTRIBUTIONS}. Got {distribution!r} instead."
            )
        heavy = distribution in ("student-t", "multivariate-t")
        if heavy:
            if df is None:
                raise ValueError(
                    f"The 'df' parameter of {owner} is required for "
                    f"distribution={distribution!r}."
                )
            df = _check_real(df, "df", owner, low=2.0)
        elif df is not None:
            raise ValueError(
                f"The 'df' parameter of {owner} applies only to the t laws. Got "
                f"df={df!r} with distribution={distribution!r}."
            )
        phi = _check_real(ar_coefficient, "ar_coefficient", owner, low=-1.0, high=1.0)
        rng = _rng(random_state)
        shape = (n_samples, self.n_features)
        if distribution == "gaussian":
            white = rng.standard_normal(shape)
        elif distribution == "student-t":
            white = rng.standard_t(df, size=shape) * np.sqrt((df - 2.0) / df)
        elif distribution == "multivariate-t":
            scale = np.sqrt(rng.chisquare(df, size=n_samples) / df)
            white = rng.standard_normal(shape) / scale[:, None]
            white *= np.sqrt((df - 2.0) / df)
        else:
            white = rng.integers(0, 2, size=shape) * 2.0 - 1.0
        if phi != 0.0:
            gain = np.sqrt(1.0 - phi * phi)
            initial = ((1.0 - gain) * white[0])[None, :]
            import scipy.signal  # the AR(1) filter only: slow to import

            white, _ = scipy.signal.lfilter(
                [gain], [1.0, -phi], white, axis=0, zi=initial
            )
        if self.eigenvectors is None:
            return white * np.sqrt(self.eigenvalues)
        return white @ self._sqrt_covariance

    def __repr__(self) -> str:
        params = ", ".join(f"{k}={v!r}" for k, v in self.params.items())
        sep = ", " if params else ""
        return f"Design({self.name!r}, n_features={self.n_features}{sep}{params})"


def _identity(n_features, rng, *, variance=1.0):
    variance = _check_real(variance, "variance", "make_design('identity')", low=0)
    return np.full(n_features, variance), None


def _spiked(n_features, rng, *, spikes=(10.0, 5.0, 3.0), noise_variance=1.0):
    owner = "make_design('spiked')"
    spikes = _check_positive_vector(spikes, "spikes", owner)
    noise = _check_real(noise_variance, "noise_variance", owner, low=0)
    if spikes.size > n_features:
        raise ValueError(
            f"The 'spikes' parameter of {owner} has {spikes.size} spikes, more "
            f"than n_features={n_features}."
        )
    values = np.full(n_features, noise)
    values[: spikes.size] = spikes
    return values, None


def _mixture(n_features, rng, *, levels=(1.0, 3.0, 10.0), weights=(0.2, 0.4, 0.4)):
    owner = "make_design('mixture')"
    levels = _check_positive_vector(levels, "levels", owner)
    weights = _check_positive_vector(weights, "weights", owner)
    if weights.size != levels.size or abs(weights.sum() - 1.0) > 1e-9:
        raise ValueError(
            f"The 'weights' parameter of {owner} must have one positive weight "
            f"per level ({levels.size}) summing to 1. Got {weights.tolist()!r}."
        )
    # Largest-remainder rounding: counts sum to n_features, ties to the
    # earlier level.
    exact = weights * n_features
    counts = np.floor(exact).astype(int)
    order = np.argsort(-(exact - counts), kind="stable")
    counts[order[: n_features - counts.sum()]] += 1
    return np.repeat(levels, counts), None


def _power_law(n_features, rng, *, exponent=1.0):
    exponent = _check_real(
        exponent, "exponent", "make_design('power-law')", low=0, closed="left"
    )
    values = np.arange(1, n_features + 1, dtype=np.float64) ** -exponent
    return values / values.mean(), None


def _toeplitz(n_features, rng, *, rho=0.5, variance=1.0):
    owner = "make_design('toeplitz')"
    rho = _check_real(rho, "rho", owner, low=-1.0, high=1.0)
    variance = _check_real(variance, "variance", owner, low=0)
    cov = variance * scipy.linalg.toeplitz(rho ** np.arange(n_features))
    return _eigh(cov)


def _block_factor(
    n_features,
    rng,
    *,
    n_blocks=5,
    market_variance=1.0,
    block_variance=0.5,
    loading_spread=0.3,
    idiosyncratic_range=(0.5, 2.0),
):
    owner = "make_design('block-factor')"
    n_blocks = _check_int(n_blocks, "n_blocks", owner, low=1)
    if n_blocks > n_features:
        raise ValueError(
            f"The 'n_blocks' parameter of {owner} must be <= n_features="
            f"{n_features}. Got {n_blocks} instead."
        )
    market = _check_real(
        market_variance, "market_variance", owner, low=0, closed="left"
    )
    block = _check_real(block_variance, "block_variance", owner, low=0, closed="left")
    spread = _check_real(
        loading_spread, "loading_spread", owner, low=0, high=1, closed="left"
    )
    idio = _check_positive_vector(idiosyncratic_range, "idiosyncratic_range", owner)
    if idio.size != 2 or idio[0] > idio[1]:
        raise ValueError(
            f"The 'idiosyncratic_range' parameter of {owner} must be a pair "
            f"(low, high) with 0 < low <= high. Got {idiosyncratic_range!r}."
        )
    beta = rng.uniform(1 - spread, 1 + spread, n_features)
    gamma = rng.uniform(1 - spread, 1 + spread, n_features)
    psi = rng.uniform(idio[0], idio[1], n_features)
    labels = np.arange(n_features) * n_blocks // n_features  # contiguous sectors
    same = labels[:, None] == labels[None, :]
    cov = market * np.outer(beta, beta) + block * np.outer(gamma, gamma) * same
    cov[np.diag_indices(n_features)] += psi
    return _eigh(cov)


def _eigh(cov: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    values, vectors = np.linalg.eigh(cov)
    return values[::-1], vectors[:, ::-1]


#: Registry of design constructors, name -> ``f(n_features, rng, **params)``
#: returning ``(eigenvalues, eigenvectors or None)``.
DESIGNS = MappingProxyType(
    {
        "identity": _identity,
        "spiked": _spiked,
        "mixture": _mixture,
        "power-law": _power_law,
        "toeplitz": _toeplitz,
        "block-factor": _block_factor,
    }
)


def make_design(
    name: str, n_features: int, *, rotate: bool = False, random_state=None, **params
) -> Design:
    r"""Build a named population covariance.

    Parameters
    ----------
    name : str
        One of :data:`DESIGNS`:

        - ``"identity"``: ``variance=1.0`` times the identity.
        - ``"spiked"``: eigenvalues ``spikes=(10, 5, 3)`` on the first
          coordinates, ``noise_variance=1.0`` elsewhere.
        - ``"mixture"``: ``levels=(1, 3, 10)`` with ``weights=(0.2, 0.4,
          0.4)``, counts rounded by largest remainder; the defaults are
          Ledoit & Wolf's (2012, 2020) Monte Carlo design.
        - ``"power-law"``: :math:`\lambda_i \propto i^{-\alpha}`,
          ``exponent`` :math:`\alpha = 1.0` (0 gives the identity), scaled to
          mean 1.
        - ``"toeplitz"``: :math:`\Sigma_{ij} = v\rho^{|i-j|}` (AR(1) across
          features), ``rho=0.5``, ``variance=1.0``.
        - ``"block-factor"``: :math:`\Sigma = \sigma_m^2\beta\beta' +
          \sigma_b^2 (\gamma\gamma')\circ B + \operatorname{diag}(\psi)`, a
          market factor plus ``n_blocks=5`` contiguous equal sectors
          (:math:`B_{ij} = 1` within a sector), loadings
          :math:`\beta_i, \gamma_i \sim U(1 \pm s)` with
          ``loading_spread`` :math:`s = 0.3`, heteroscedastic idiosyncratic
          variances :math:`\psi_i \sim U(` ``idiosyncratic_range=(0.5, 2)``
          :math:`)`, ``market_variance=1.0``, ``block_variance=0.5``.
          Random: uses ``random_state``.
    n_features : int
        Dimension :math:`p \ge 1`.
    rotate : bool, default=False
        If True, rotate the design by a Haar random orthogonal matrix
        :math:`Q` (:func:`random_rotation`): :math:`Q\Sigma Q'`, so that the
        truth is not diagonal; same eigenvalues.
    random_state : None, int or numpy.random.Generator, default=None
        Seed for the random parts (``"block-factor"`` loadings, the
        rotation). Pass an int for a reproducible design.
    **params
        Parameters of the design, as listed above.

    Returns
    -------
    design : Design

    Raises
    ------
    ValueError
        Unknown name, unknown parameter, or a parameter out of range.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.synthetic import make_design
    >>> design = make_design("mixture", 10, rotate=True, random_state=0)
    >>> design.eigenvalues
    array([10., 10., 10., 10.,  3.,  3.,  3.,  3.,  1.,  1.])
    >>> bool(np.allclose(np.linalg.eigvalsh(design.covariance)[::-1],
    ...                  design.eigenvalues))
    True
    """
    if name not in DESIGNS:
        raise ValueError(
            f"The 'name' parameter of make_design must be one of "
            f"{sorted(DESIGNS)}. Got {name!r} instead."
        )
    n_features = _check_int(n_features, "n_features", "make_design", low=1)
    rng = _rng(random_state)
    constructor = DESIGNS[name]
    try:
        values, vectors = constructor(n_features, rng, **params)
    except TypeError as exc:
        if "unexpected keyword" not in str(exc):
            raise
        raise ValueError(
            f"make_design({name!r}) got an unknown parameter: {exc}."
        ) from None
    order = np.argsort(-values, kind="stable")  # descending, as everywhere
    values = values[order]
    if vectors is not None:
        vectors = vectors[:, order]
    if rotate:
        rotation = random_rotation(n_features, rng)
        vectors = rotation if vectors is None else rotation @ vectors
    recorded = dict(params)
    if rotate:
        recorded["rotate"] = True
    return Design(
        name=name,
        eigenvalues=_readonly(values),
        eigenvectors=None if vectors is None else _readonly(vectors),
        params=MappingProxyType(recorded),
    )

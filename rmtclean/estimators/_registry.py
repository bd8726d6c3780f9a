"""The one list of rmtclean's cleaners, read by the CLI, the demo, bench and tests.

Each entry gives a cleaner's class name, its short command-line name, the
module that defines the class and a one-line description. A new cleaner is
one :class:`CleanerEntry` line in :data:`CLEANERS` (and its name in the
``__all__`` lists of :mod:`rmtclean` and :mod:`rmtclean.estimators`).

The registry imports no estimator: the class is loaded on first use of
:attr:`CleanerEntry.cls`, so ``rmtclean --help`` can list the cleaners
without loading scikit-learn or the compiled kernels.
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass

__all__ = ["CLEANERS", "CleanerEntry", "find_cleaner"]


@dataclass(frozen=True)
class CleanerEntry:
    """One cleaner of the registry.

    Attributes
    ----------
    name : str
        The class name, e.g. ``"KernelShrink"``; names the cleaner in
        tables and reports.
    short : str
        The short command-line name, e.g. ``"kernel"``.
    module : str
        The module defining the class, e.g.
        ``"rmtclean.estimators._kernel"``; :attr:`cls` imports it.
    description : str
        One line for ``--help`` and tables.
    aliases : tuple of str
        Further spellings :func:`find_cleaner` accepts, e.g.
        ``("ledoit-wolf",)``.
    takes_missing : bool, default=True
        Whether the class takes ``missing="pairwise"`` / ``"em"`` (it works
        from a covariance estimate); False for cleaners that need the
        complete data rows. The CLI offers ``--missing pairwise|em`` by it.

    Examples
    --------
    >>> from rmtclean.estimators import CLEANERS
    >>> entry = CLEANERS[0]
    >>> entry.short, entry.cls.__name__ == entry.name
    ('clip', True)
    """

    name: str
    short: str
    module: str
    description: str
    aliases: tuple[str, ...] = ()
    takes_missing: bool = True

    def __post_init__(self):
        if not isinstance(self.module, str):
            raise TypeError(
                f"CleanerEntry({self.name!r}): the third field is the module "
                "path of the class (e.g. 'rmtclean.estimators._kernel'), not the "
                f"class; got {self.module!r}. The registry must not import the "
                "estimators."
            )

    @property
    def cls(self) -> type:
        """The estimator class, imported on first use."""
        return getattr(importlib.import_module(self.module), self.name)

    def spellings(self) -> tuple[str, ...]:
        """Every accepted spelling, lower-cased: name, short name, aliases."""
        return tuple(s.lower() for s in (self.name, self.short, *self.aliases))


#: The library's cleaners, in the order of tables and reports.
CLEANERS: tuple[CleanerEntry, ...] = (
    CleanerEntry(
        "EigenClip",
        "clip",
        "rmtclean.estimators._clip",
        "noise eigenvalues clipped to their mean (Laloux et al. 1999)",
    ),
    CleanerEntry(
        "LinearShrink",
        "linear",
        "rmtclean.estimators._linear",
        "linear shrinkage to a target (Ledoit & Wolf 2004)",
        aliases=("ledoit-wolf",),
        takes_missing=False,
    ),
    CleanerEntry(
        "KernelShrink",
        "kernel",
        "rmtclean.estimators._kernel",
        "analytical nonlinear shrinkage (Ledoit & Wolf 2020)",
    ),
    CleanerEntry(
        "StieltjesShrink",
        "stieltjes",
        "rmtclean.estimators._stieltjes",
        "rotationally invariant estimator (Bun et al. 2016)",
    ),
    CleanerEntry(
        "SpikeShrink",
        "spike",
        "rmtclean.estimators._spiked",
        "optimal shrinkage of the spikes (Donoho et al. 2018)",
    ),
    CleanerEntry(
        "SplitShrink",
        "split",
        "rmtclean.estimators._split",
        "split-sample eigenvalues (Lam 2016)",
        takes_missing=False,
    ),
    CleanerEntry(
        "TylerShrink",
        "tyler",
        "rmtclean.estimators._tyler",
        "robust shape for heavy tails: a cleaner on the spatial signs, or "
        "Tyler's fixed point (Chen et al. 2011)",
        takes_missing=False,
    ),
    CleanerEntry(
        "AutoShrink",
        "auto",
        "rmtclean.estimators._auto",
        "the cleaner chosen by held-out score (cross-validation)",
        takes_missing=False,
    ),
)


def find_cleaner(text: str) -> CleanerEntry:
    """The registry entry named by ``text``: class name, short name or alias.

    Parameters
    ----------
    text : str
        A spelling of the cleaner, in any case (``"KernelShrink"``,
        ``"kernel"``, ``"LEDOIT-WOLF"``).

    Returns
    -------
    CleanerEntry

    Raises
    ------
    ValueError
        If no cleaner answers to ``text``; the message lists the short names
        with their descriptions.

    Examples
    --------
    >>> from rmtclean.estimators import find_cleaner
    >>> find_cleaner("ledoit-wolf").name
    'LinearShrink'
    >>> find_cleaner("KERNEL").cls.__name__
    'KernelShrink'
    """
    wanted = str(text).strip().lower()
    for entry in CLEANERS:
        if wanted in entry.spellings():
            return entry
    choices = "; ".join(f"{e.short}: {e.description}" for e in CLEANERS)
    raise ValueError(
        f"The 'text' parameter of find_cleaner must name a cleaner (class name, "
        f"short name or alias, any case). Got {text!r}; choose among: {choices}."
    )

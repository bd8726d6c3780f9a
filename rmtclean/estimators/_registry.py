"""The one list of rmtclean's cleaners, read by the CLI, the demo, bench and tests.

Each entry gives a cleaner's class name, its short command-line name, the
class and a one-line description. A new cleaner is one import and one
:class:`CleanerEntry` line in :data:`CLEANERS`; nothing else in the package
spells the estimator names.
"""

from __future__ import annotations

from dataclasses import dataclass

from rmtclean.estimators._clip import EigenClip
from rmtclean.estimators._kernel import KernelShrink
from rmtclean.estimators._linear import LinearShrink
from rmtclean.estimators._spiked import SpikeShrink
from rmtclean.estimators._split import SplitShrink
from rmtclean.estimators._stieltjes import StieltjesShrink

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
    cls : type
        The estimator class.
    description : str
        One line for ``--help`` and tables.
    aliases : tuple of str
        Further spellings :func:`find_cleaner` accepts, e.g.
        ``("ledoit-wolf",)``.

    Examples
    --------
    >>> from rmtclean.estimators import CLEANERS
    >>> entry = CLEANERS[0]
    >>> entry.short, entry.cls.__name__ == entry.name
    ('clip', True)
    """

    name: str
    short: str
    cls: type
    description: str
    aliases: tuple[str, ...] = ()

    def spellings(self) -> tuple[str, ...]:
        """Every accepted spelling, lower-cased: name, short name, aliases."""
        return tuple(s.lower() for s in (self.name, self.short, *self.aliases))


#: The library's cleaners, in the order of tables and reports.
CLEANERS: tuple[CleanerEntry, ...] = (
    CleanerEntry(
        "EigenClip",
        "clip",
        EigenClip,
        "noise eigenvalues clipped to their mean (Laloux et al. 1999)",
    ),
    CleanerEntry(
        "LinearShrink",
        "linear",
        LinearShrink,
        "linear shrinkage to a target (Ledoit & Wolf 2004)",
        aliases=("ledoit-wolf",),
    ),
    CleanerEntry(
        "KernelShrink",
        "kernel",
        KernelShrink,
        "analytical nonlinear shrinkage (Ledoit & Wolf 2020)",
    ),
    CleanerEntry(
        "StieltjesShrink",
        "stieltjes",
        StieltjesShrink,
        "rotationally invariant estimator (Bun et al. 2016)",
    ),
    CleanerEntry(
        "SpikeShrink",
        "spike",
        SpikeShrink,
        "optimal shrinkage of the spikes (Donoho et al. 2018)",
    ),
    CleanerEntry(
        "SplitShrink",
        "split",
        SplitShrink,
        "split-sample eigenvalues (Lam 2016)",
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

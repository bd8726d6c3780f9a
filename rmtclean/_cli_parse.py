"""Pieces of the ``rmtclean`` command's argument parsing.

A subcommand parser that knows each option's flag (for messages that speak
of flags) and the argparse types of the options (the cleaner names among them).
"""

from __future__ import annotations

import argparse

__all__ = [
    "CommandParser",
    "count_at_least",
    "csv_list",
    "method_choices",
    "method_name",
    "wrap_description",
]


class CommandParser(argparse.ArgumentParser):
    """A subcommand's parser that knows each option's flag by parameter name.

    ``flags`` maps an option's destination to its first flag (``"alpha"``
    -> ``"--alpha"``), so messages can speak of flags.
    """

    def __init__(self, *args, **kwargs):
        self.flags: dict[str, str] = {}
        super().__init__(*args, **kwargs)

    def add_argument(self, *args, **kwargs):
        action = super().add_argument(*args, **kwargs)
        if action.option_strings:
            self.flags[action.dest] = action.option_strings[0]
        return action


def count_at_least(low: int, why: str):
    """argparse type: an integer of at least ``low`` (``why`` says the reason)."""

    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            value = low - 1
        if value < low:
            raise argparse.ArgumentTypeError(
                f"expected an integer of at least {low} ({why}), got {text!r}"
            )
        return value

    return parse


def csv_list(kind):
    """argparse type: a comma-separated list of ``kind`` (empty items skipped)."""

    def parse(text: str):
        try:
            return [kind(item) for item in text.split(",") if item.strip()]
        except ValueError:
            raise argparse.ArgumentTypeError(
                f"expected a comma-separated list of {kind.__name__}, got {text!r}"
            ) from None

    return parse


def method_choices() -> str:
    """The registry's short names with their descriptions, on one line."""
    from rmtclean.estimators import CLEANERS

    return "; ".join(f"{e.short}: {e.description}" for e in CLEANERS)


def method_name(text: str) -> str:
    """The class name of the cleaner ``text`` names (short, class or alias)."""
    from rmtclean.estimators import CLEANERS, find_cleaner

    try:
        return find_cleaner(text).name
    except ValueError:
        shorts = ", ".join(e.short for e in CLEANERS)
        raise argparse.ArgumentTypeError(
            f"unknown method {text!r}; choose among {shorts}, or a class name "
            "('rmtclean clean --help' says what each does)"
        ) from None


def wrap_description(text: str) -> str:
    """A description wrapped as argparse wraps the options (raw formatter)."""
    import textwrap

    return textwrap.fill(text, 79)

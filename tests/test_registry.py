"""The estimator registry: one entry per exported cleaner, every spelling found."""

import argparse

import pytest

from rmtclean._cli_parse import method_name
from rmtclean.estimators import CLEANERS, CleanerEntry, find_cleaner
from tests._registry import exported_estimators


def test_one_entry_per_exported_estimator():
    classes = [entry.cls for entry in CLEANERS]
    assert len(classes) == len(set(classes))
    assert set(classes) == set(exported_estimators())


def test_names_and_short_names_are_unique_and_match_the_classes():
    for entry in CLEANERS:
        assert isinstance(entry, CleanerEntry)
        assert entry.name == entry.cls.__name__
        assert entry.short and entry.short == entry.short.lower()
        assert entry.description and "\n" not in entry.description
    spellings = [s for entry in CLEANERS for s in entry.spellings()]
    assert len(spellings) == len(set(spellings)), "a spelling names two cleaners"


@pytest.mark.parametrize("entry", CLEANERS, ids=[e.short for e in CLEANERS])
def test_every_spelling_finds_its_entry(entry):
    for text in (entry.name, entry.short, *entry.aliases):
        for variant in (text, text.upper(), text.lower(), f" {text} "):
            assert find_cleaner(variant) is entry
        assert method_name(text.swapcase()) == entry.name


def test_linear_shrink_answers_to_ledoit_wolf():
    assert find_cleaner("Ledoit-Wolf").name == "LinearShrink"


def test_unknown_name_lists_the_choices():
    with pytest.raises(ValueError, match="Got 'Magic'") as info:
        find_cleaner("Magic")
    for entry in CLEANERS:
        assert f"{entry.short}: {entry.description}" in str(info.value)
    with pytest.raises(
        argparse.ArgumentTypeError, match="unknown method 'Magic'"
    ) as info:
        method_name("Magic")
    # the command line lists the short names in one line, not every description
    shorts = ", ".join(entry.short for entry in CLEANERS)
    assert f"choose among {shorts}, or a class name" in str(info.value)

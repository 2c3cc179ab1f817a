"""Keeping a member of a collinear group: the group's key, the member kept
now, and the project's ``keep_choices`` after a choice."""

from __future__ import annotations

import copy
import dataclasses

import pytest

from covariscope.views.keep_choice import keep_choice, keep_choices_after, kept_words
from covariscope.vocabulary import group_key


def test_group_key_sorts_and_joins():
    assert group_key(("income", "area")) == "area|income"


def test_the_demo_group_is_offered_on_both_members(demo_study):
    project, result, js = demo_study
    (group,) = [g for g in js["collinear_groups"] if "area" in g]
    key = group_key(group)
    assert key == "area|income"
    for member in group:
        choice = keep_choice(project, result, member)
        assert choice is not None
        assert choice.key == key
        assert set(choice.group) == set(group)
        assert choice.kept == result.verdicts[member].suggested
        assert not choice.saved
        assert choice.labels[member] == project.diagram.node(member).label
    # a covariate whose verdict is not keep_one_of has no group to choose in
    assert keep_choice(project, result, "age") is None
    assert keep_choice(project, None, "area") is None


def test_choices_after_a_choice(demo_study):
    project = copy.deepcopy(demo_study[0])
    project.analysis.keep_choices = {}
    assert keep_choices_after(project, "area|income", "area") == {"area|income": "area"}
    project.analysis.keep_choices = {"area|income": "area", "a|b": "b"}
    assert keep_choices_after(project, "area|income", "area") is None
    assert keep_choices_after(project, "area|income", "income") == {
        "area|income": "income",
        "a|b": "b",
    }
    assert keep_choices_after(project, "area|income", None) == {"a|b": "b"}
    assert keep_choices_after(project, "x|y", None) is None
    with pytest.raises(ValueError, match="not a member"):
        keep_choices_after(project, "area|income", "age")


def test_kept_words_name_the_kept_member(demo_study):
    project, result, _ = demo_study
    choice = keep_choice(project, result, "area")
    kept = "this one" if choice.kept == "area" else choice.labels[choice.kept]
    assert kept_words(choice) == f"{kept} kept"
    saved = dataclasses.replace(choice, kept="area", saved=True)
    assert kept_words(saved) == "this one kept (your choice)"

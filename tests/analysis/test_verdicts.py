"""Each verdict rule on a small case of its own (plain numbers, no data)."""

from __future__ import annotations

from dataclasses import replace

import pytest

from covariscope.analysis.verdicts import (
    LABELS,
    VERDICTS,
    Facts,
    Numbers,
    Shift,
    collinear_groups,
    decide_verdict,
)

CALM = Numbers(added=Shift(2.0, 1.0), dropped=Shift(1.0, 0.5), vif_exposure=1.1, r2_exposure=0.05)


def _one_sentence(reason: str) -> bool:
    return reason.endswith(".") and ". " not in reason.rstrip(".")


def test_vocabulary_is_complete():
    assert set(LABELS) == set(VERDICTS)
    assert len(VERDICTS) == 12


def test_proxy_link_to_the_exposure_excludes_whatever_the_role():
    for role in ("confounder", "precision", "descendant_of_exposure"):
        v = decide_verdict(Facts("w", role, measures_exposure=True), CALM)
        assert v.code == "exclude_measures_exposure"
        assert "another measure" in v.reason


def test_data_that_show_a_copy_of_the_exposure_exclude_it():
    n = Numbers(added=Shift(3.0, 180.0), r2_exposure=0.95, vif_exposure=20.0)
    v = decide_verdict(Facts("w", "confounder"), n)
    assert v.code == "exclude_measures_exposure"
    assert "0.95" in v.reason
    assert "+180.0%" in v.reason
    assert "0.9" in v.reason
    assert "20%" in v.reason
    # A strong confounder under the R² guide is not a copy of the exposure.
    n_under = Numbers(added=Shift(30.0, 180.0), r2_exposure=0.85)
    assert decide_verdict(Facts("w", "confounder"), n_under).code == "adjust"
    assert decide_verdict(Facts("w", "confounder"), n_under, thresholds={"r2": 0.8}).code == (
        "exclude_measures_exposure"
    )
    # High R² alone, without the SE inflation past its guide, is not enough.
    n2 = Numbers(added=Shift(30.0, 10.0), r2_exposure=0.95)
    assert decide_verdict(Facts("w", "confounder"), n2).code == "adjust"


def test_confounder_with_little_change_is_still_adjusted():
    n = Numbers(added=Shift(4.2, 1.0), r2_exposure=0.1)
    v = decide_verdict(Facts("age", "confounder"), n)
    assert v.code == "adjust"
    assert "requires" in v.reason
    assert "little confounding" in v.reason
    assert "+4.2%" in v.reason
    assert "10%" in v.reason
    assert _one_sentence(v.reason)


def test_confounder_with_large_change_is_adjusted_and_the_data_agree():
    v = decide_verdict(Facts("age", "confounder"), Numbers(added=Shift(-31.0, 2.0)))
    assert v.code == "adjust"
    assert "agree" in v.reason
    assert "-31.0%" in v.reason


def test_collinear_confounders_keep_one_of():
    f = Facts(
        "bmi",
        "confounder",
        group=("bmi", "waist"),
        group_alone=("bmi", "waist"),
        suggested="waist",
        suggested_why="it is the member in the recommended set",
    )
    v = decide_verdict(f, Numbers(added=Shift(12.0, 3.0), vif=25.0, aux_r2=0.96))
    assert v.code == "keep_one_of"
    assert v.group == ("bmi", "waist")
    assert v.suggested == "waist"
    assert "{bmi, waist}" in v.reason
    assert "waist is suggested" in v.reason
    assert "0.96" in v.reason
    assert "0.9" in v.reason
    assert _one_sentence(v.reason)


def test_review_when_a_precision_variable_shifts_the_estimate():
    v = decide_verdict(Facts("diet", "precision"), Numbers(added=Shift(15.3, -2.0)))
    assert v.code == "review"
    assert "adding it to the crude model" in v.reason
    assert "+15.3%" in v.reason
    assert "10%" in v.reason
    assert "arrow" in v.reason
    assert _one_sentence(v.reason)


def test_review_reads_the_dropped_comparison_too():
    n = Numbers(added=Shift(3.0, 1.0), dropped=Shift(-22.0, 1.0))
    v = decide_verdict(Facts("z", "unrelated"), n)
    assert v.code == "review"
    assert "the full model against the full model without it" in v.reason
    assert "-22.0%" in v.reason


def test_thresholds_are_read_from_the_settings():
    n = Numbers(added=Shift(15.0, 1.0))
    assert decide_verdict(Facts("d", "precision"), n, thresholds={"change_pct": 20.0}).code == (
        "optional_precision"
    )
    v = decide_verdict(Facts("d", "precision"), n, thresholds={"change_pct": 5.0})
    assert v.code == "review"
    assert "5% guide" in v.reason


def test_unrelated_is_not_needed_and_not_called_precision():
    v = decide_verdict(Facts("canteen", "unrelated"), CALM)
    assert v.code == "not_needed"
    assert v.label == "Not needed — unrelated"
    assert "precision" not in v.reason
    assert v.reason.startswith(
        "Not needed: the diagram links it to neither the exposure nor the outcome"
    )
    assert "+2.0%" in v.reason
    assert "10%" in v.reason
    assert _one_sentence(v.reason)
    # Past the change guide the data contradict the diagram.
    assert decide_verdict(Facts("canteen", "unrelated"), Numbers(added=Shift(12.0, 1.0))).code == (
        "review"
    )
    graph_only = decide_verdict(Facts("canteen", "unrelated", has_data=False))
    assert graph_only.code == "not_needed"
    assert "no data" in graph_only.reason


def test_no_review_under_the_threshold():
    v = decide_verdict(Facts("s", "precision"), CALM)
    assert v.code == "optional_precision"
    assert "+2.0%" in v.reason
    assert "10%" in v.reason


def test_instrument_is_avoided_with_its_numbers():
    n = Numbers(added=Shift(1.0, 35.0), vif_exposure=1.9, r2_exposure=0.47)
    v = decide_verdict(Facts("iv", "instrument"), n)
    assert v.code == "avoid_instrument"
    assert "+35.0%" in v.reason
    assert "20%" in v.reason
    assert "1.9" in v.reason


def test_instrument_that_shifts_the_estimate_is_flagged_for_review():
    v = decide_verdict(Facts("iv", "instrument"), Numbers(added=Shift(18.0, 20.0), r2_exposure=0.4))
    assert v.code == "review"
    assert "amplify" in v.reason


def test_pathway_descendants_and_colliders_are_excluded():
    assert decide_verdict(Facts("m", "mediator"), CALM).code == "exclude_pathway"
    d = decide_verdict(Facts("d", "descendant_of_outcome"), CALM)
    assert d.code == "exclude_descendant"
    assert "outcome" in d.reason
    e = decide_verdict(Facts("e", "descendant_of_exposure"))
    assert e.code == "exclude_descendant"
    assert "exposure" in e.reason
    o = decide_verdict(Facts("o", "precision", measures_outcome=True))
    assert o.code == "exclude_descendant"
    assert "measure of it" in o.reason


def test_collider_in_the_proposed_set_names_the_path_it_opens():
    f = Facts("m", "collider", in_proposed=True, opened_paths=(("x", "a", "m", "b", "y"),))
    v = decide_verdict(f, CALM)
    assert v.code == "exclude_collider"
    assert "x – a – m – b – y" in v.reason
    assert "opens" not in decide_verdict(Facts("m", "collider"), CALM).reason


def test_confounder_proxy_says_whether_its_confounder_is_adjusted():
    adjusted = decide_verdict(
        Facts("grey", "confounder_proxy", stands_for=("age",), stands_for_adjusted=("age",)), CALM
    )
    assert adjusted.code == "consider_proxy"
    assert "unnecessary" in adjusted.reason
    missing = decide_verdict(Facts("grey", "confounder_proxy", stands_for=("u",)), CALM)
    assert missing.code == "consider_proxy"
    assert "worth adjusting" in missing.reason


def test_unmeasured_says_what_adjusting_would_do_and_whether_the_set_suffices():
    ok = decide_verdict(
        Facts(
            "u",
            "confounder",
            measured=False,
            would_close=(("x", "u", "y"),),
            sufficient_without=True,
            set_members=("c",),
        )
    )
    assert ok.code == "unmeasured"
    assert "x – u – y" in ok.reason
    assert "is sufficient without it" in ok.reason
    bad = decide_verdict(
        Facts("u", "confounder", measured=False, sufficient_without=False, set_name="proposed")
    )
    assert "not sufficient" in bad.reason


def test_non_collapsibility_is_not_read_as_confounding():
    # Greenland, Robins & Pearl (1999): an odds ratio moves when a strong outcome
    # predictor that is independent of the exposure is added.
    n = Numbers(added=Shift(14.0, 8.0, change_pct_ratio=16.0), r2_exposure=0.0004)
    v = decide_verdict(Facts("z", "precision"), n, family="logistic")
    assert v.code == "optional_precision"
    assert "non-collapsib" in v.reason
    assert "+16.0%" in v.reason
    assert _one_sentence(v.reason)
    # The same numbers on a linear scale are a disagreement worth reviewing.
    assert decide_verdict(Facts("z", "precision"), n, family="linear").code == "review"


def test_ratio_families_read_the_ratio_scale():
    n = Numbers(added=Shift(40.0, 1.0, change_pct_ratio=4.0), r2_exposure=0.3)
    assert decide_verdict(Facts("z", "precision"), n, family="risk_ratio").code == (
        "optional_precision"
    )


@pytest.mark.parametrize(
    ("kwargs", "expected"),
    [
        ({"proxy_groups": [("a", "b")]}, (("a", "b"),)),
        ({"pair_r2": {("a", "c"): 0.93}}, (("a", "c"),)),
        ({"pair_r2": {("a", "c"): 0.5}}, ()),
        ({"flagged": [("x", "b", "c")]}, (("b", "c"),)),
        ({"proxy_groups": [("a", "b")], "pair_r2": {("b", "c"): 0.99}}, (("a", "b", "c"),)),
    ],
)
def test_collinear_groups(kwargs, expected):
    assert collinear_groups(["a", "b", "c"], **kwargs) == expected


def test_sentences_name_variables_by_their_labels():
    names = {"u": "Early setting", "x": "Dust", "y": "Lung", "c": "Age", "a|b": "unused"}
    f = Facts(
        "u",
        "confounder",
        measured=False,
        would_close=(("x", "a|b", "u", "y"),),
        sufficient_without=True,
        set_members=("c",),
    )
    v = decide_verdict(f, names={**names, "a": "Area", "b": "Income"})
    assert v.node == "u"
    assert "Dust – Area | Income – Early setting – Lung" in v.reason
    assert "{Age}" in v.reason
    assert "had it been" not in v.reason
    assert "would have closed" in v.reason


def test_keep_one_of_names_the_members_that_alone_suffice_with_labels():
    f = Facts(
        "b",
        "confounder",
        group=("a", "b"),
        group_alone=("a",),
        group_why="their R² is 0.96 against the guide 0.9",
        suggested="a",
        suggested_why="it alone gives a sufficient set",
        set_members=("a", "c"),
    )
    v = decide_verdict(
        f, Numbers(added=Shift(12.0, 3.0), vif=25.0), names={"a": "Area", "b": "Income"}
    )
    assert v.code == "keep_one_of"
    assert v.group == ("a", "b")  # ids for scripts
    assert v.suggested == "a"
    assert "only Area alone gives a sufficient set with {c} (Income alone does not)" in v.reason
    assert "their R² is 0.96 against the guide 0.9" in v.reason
    assert "VIF in the full model is 25 against 10" in v.reason
    assert "Area is suggested because it alone gives a sufficient set" in v.reason
    assert "choice is saved" in v.reason
    assert _one_sentence(v.reason)
    # No member alone suffices, yet the diagram was not found to need each one
    # (the set falls short elsewhere too): still one group, with no claim of need.
    none = decide_verdict(Facts("b", "confounder", group=("a", "b")))
    assert none.code == "keep_one_of"
    assert "no single member alone gives a sufficient set" in none.reason
    assert "needs" not in none.reason


def test_collider_outside_the_proposed_set_names_the_path_it_would_open():
    f = Facts("m", "collider", would_open=(("x", "a", "m", "b", "y"),))
    v = decide_verdict(f, CALM)
    assert "adjusting for it would open x – a – m – b – y" in v.reason


def test_review_says_which_arrow_the_diagram_may_lack():
    shift = Numbers(added=Shift(18.0, 2.0), r2_exposure=0.3)
    precision = decide_verdict(Facts("p", "precision"), shift)
    assert "linking it to the exposure" in precision.reason
    instrument = decide_verdict(Facts("i", "instrument"), shift)
    assert "linking it to the outcome" in instrument.reason


@pytest.mark.parametrize(("family", "measure"), [("logistic", "odds"), ("cox", "hazard")])
def test_confounder_in_a_non_collapsible_family_carries_the_caution(family, measure):
    n = Numbers(added=Shift(-20.0, 5.0, change_pct_ratio=-18.0), r2_exposure=0.3)
    v = decide_verdict(Facts("age", "confounder"), n, family=family)
    assert v.code == "adjust"
    assert f"{measure} ratio can be non-collapsibility" in v.reason
    assert "-18.0% on the ratio scale" in v.reason
    linear = decide_verdict(Facts("age", "confounder"), n, family="risk_ratio")
    assert "non-collapsib" not in linear.reason


def test_a_change_that_rounds_to_zero_has_no_minus_sign():
    v = decide_verdict(Facts("s", "precision"), Numbers(added=Shift(-0.01, -0.04)))
    assert "by +0.0% and its standard error by +0.0%" in v.reason


def test_collinear_members_the_diagram_needs_together_are_each_adjusted_for():
    n = Numbers(added=Shift(4.0, 38.0), vif=14.0, aux_r2=0.93)
    f = Facts(
        "a",
        "confounder",
        group=("a", "b"),
        group_needed=True,
        group_why="their R² is 0.92 against the guide 0.9",
        set_members=("a", "b", "c"),
    )
    v = decide_verdict(f, n)
    assert v.code == "adjust"
    assert v.group == ()
    assert "collinear with b" in v.reason
    assert "auxiliary R² in the full model is 0.93 against the guide 0.9" in v.reason
    assert "VIF 14 against 10" in v.reason
    assert "alone gives a sufficient set with {c}" in v.reason
    assert "the diagram needs both" in v.reason
    assert "wider confidence interval" in v.reason
    assert _one_sentence(v.reason)
    # Interchangeable members (some member alone suffices) are still one to keep.
    keep = replace(f, group_needed=False, group_alone=("a", "b"))
    assert decide_verdict(keep, n).code == "keep_one_of"


def test_a_collider_sentence_labels_only_the_paths_it_names() -> None:
    from covariscope.analysis.verdict_wording import PATHS_NAMED, labelled

    paths = tuple(("x", f"a{i}", "m", "b", "y") for i in range(400))
    f = Facts("m", "collider", would_open=paths)
    names = {"m": "Middle", "b": "Bee", "x": "Ex", "y": "Why"}
    short = labelled(f, names)
    assert len(short.would_open) == PATHS_NAMED
    assert short.would_open[0] == ("Ex", "a0", "Middle", "Bee", "Why")
    # the sentence is the same whether the facts hold 400 paths or the 3 it names
    whole = decide_verdict(f, names=names).reason
    assert whole == decide_verdict(Facts("m", "collider", would_open=paths[:3]), names=names).reason
    assert "Ex – a2 – Middle – Bee – Why" in whole
    assert "a3" not in whole


def test_a_large_set_is_named_in_part_and_counted():
    from covariscope.analysis.verdict_wording import MEMBERS_NAMED

    big = tuple(f"c{i:03d}" for i in range(300))
    names = {c: f"Cov {c}" for c in big}
    keep = Facts(
        "b",
        "confounder",
        group=("a", "b"),
        group_alone=("a", "b"),
        set_members=("a", *big),
    )
    v = decide_verdict(keep, CALM, names=names)
    assert v.code == "keep_one_of"
    shown = ", ".join(f"Cov c{i:03d}" for i in range(MEMBERS_NAMED))
    assert f"each member alone gives a sufficient set with {{{shown}}} and 288 more" in v.reason
    assert "Cov c299" not in v.reason
    lost = Facts("u", "confounder", measured=False, sufficient_without=True, set_members=big)
    w = decide_verdict(lost, names=names)
    assert f"{{{shown}}} and 288 more is sufficient without it" in w.reason
    proxy = Facts("p", "confounder_proxy", stands_for=big)
    assert (
        f"since {shown} and 288 more, the confounder"
        in decide_verdict(proxy, CALM, names=names).reason
    )
    # a set of MEMBERS_NAMED or fewer is named whole, as before
    small = replace(keep, set_members=("a", *big[:MEMBERS_NAMED]))
    assert f"with {{{shown}}};" in decide_verdict(small, CALM, names=names).reason

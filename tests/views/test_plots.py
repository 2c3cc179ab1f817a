"""What the diagnostics plots show, decided without a window: which picture a
covariate gets (boxes, stacked shares, scatter), which rows and levels, the
sampling of rows and the words on the axes."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pandas as pd
import pytest

from covariscope.model.project import load_project
from covariscope.views.diagnostics import ModelRow, endpoint_diagnostics, node_diagnostics
from covariscope.views.plots import (
    MAX_POINTS,
    BoxPicture,
    CountPicture,
    EstimatesPicture,
    HistogramPicture,
    PlotMessage,
    ScatterPicture,
    SharesPicture,
    analysed_rows,
    covariate_heading,
    data_picture,
    distribution_picture,
    endpoint_heading,
    estimates_caption,
    estimates_picture,
    holds_a_random_sample,
    reference_first,
    sample_picture,
)


@pytest.fixture
def project(demo_folder):
    """A fresh copy of the demo project: tests change its settings."""
    return load_project(demo_folder / "demo_project.json")


def _frame(rows: int, seed: int = 1) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    return pd.DataFrame(
        {
            "dust": rng.normal(size=rows),
            "age": rng.normal(40, 8, size=rows),
            "smoke": rng.choice(["never", "former", "current"], size=rows),
        }
    )


def test_estimates_one_line_per_fitted_model(demo_study):
    project, result, _ = demo_study
    s = node_diagnostics(project, result, "age")
    picture = estimates_picture(s, result.family)
    assert isinstance(picture, EstimatesPicture)
    fitted = [m.point for m in s.models if m.point is not None]
    assert [name for _, name in picture.ticks] == [p[0] for p in fitted]
    (series,) = picture.series
    assert series.estimates == tuple(p[1] for p in fitted)
    assert series.lows == tuple(p[2] for p in fitted)
    assert series.highs == tuple(p[3] for p in fitted)
    # the first model is the top line
    assert series.ys == tuple(float(len(fitted) - 1 - i) for i in range(len(fitted)))
    assert not picture.legend
    # a linear model's coefficient: the no-effect line at 0 on a linear axis
    assert (picture.null, picture.log_scale) == (0.0, False)
    assert picture.x_label == f"{s.effect_measure} with 95% CI"


def test_estimates_on_a_ratio_scale_and_before_any_fit(demo_study):
    project, result, _ = demo_study
    s = node_diagnostics(project, result, "age")
    picture = estimates_picture(s, "logistic")
    assert isinstance(picture, EstimatesPicture)
    assert (picture.null, picture.log_scale) == (1.0, True)
    waiting = node_diagnostics(project, None, "age")
    assert estimates_picture(waiting, "linear") == PlotMessage("No fitted models yet")


def test_contrasts_share_a_model_line_side_by_side(demo_study):
    project, result, _ = demo_study
    s = node_diagnostics(project, result, "age")

    def row(model: str, contrast: str, est: float) -> ModelRow:
        title = f"{model}: {contrast}"
        return ModelRow(title, "", "", "", "", (model, est, est - 1, est + 1), contrast)

    rows = tuple(
        row(m, c, e)
        for m, e in (("Crude", 1.0), ("Full", 2.0))
        for c in ("high vs low", "middle vs low")
    )
    picture = estimates_picture(replace(s, models=rows), "linear")
    assert isinstance(picture, EstimatesPicture)
    assert [x.contrast for x in picture.series] == ["high vs low", "middle vs low"]
    assert picture.legend
    assert picture.ticks == ((1.0, "Crude"), (0.0, "Full"))
    high, middle = picture.series
    assert high.ys == pytest.approx((0.85, -0.15))
    assert middle.ys == pytest.approx((1.15, 0.15))


def test_scatter_of_the_rows_the_models_used(demo_study, demo_folder):
    # moved from tests/qt/test_diagnostics: the plot shows the analytic sample,
    # not every row of the file
    project, result, js = demo_study
    s = node_diagnostics(project, result, "age")
    frame = pd.read_csv(demo_folder / "demo_cohort.csv")
    rows = analysed_rows(result.sample, frame, s)
    assert not holds_a_random_sample(result.sample, rows)
    picture = data_picture(s, project, None, rows)
    assert isinstance(picture, ScatterPicture)
    assert len(picture.x) == len(picture.y) == js["sample"]["used"] < js["sample"]["rows"]
    assert (picture.x_label, picture.y_label) == ("Age", s.exposure_label)
    assert picture.title == "Age against the exposure"


def test_many_rows_are_sampled_the_same_way_each_time(project):
    s = node_diagnostics(project, None, "age")
    frame = _frame(MAX_POINTS + 2000)
    first = data_picture(s, project, None, frame)
    again = data_picture(s, project, None, frame)
    assert isinstance(first, ScatterPicture)
    assert isinstance(again, ScatterPicture)
    assert len(first.x) == MAX_POINTS
    assert np.array_equal(first.x, again.x)
    assert first.title.endswith(f"random sample of {MAX_POINTS:,} of {MAX_POINTS + 2000:,} rows")
    # a frame that is itself a sample counts against the analytic sample's size
    small = data_picture(s, project, None, frame.head(500), of_rows=80_000)
    assert small.title.endswith("random sample of 500 of 80,000 rows")


def test_categorical_covariate_gets_boxes_reference_first(project):
    project.update_settings(reference_levels={"smoke": "never"})
    s = node_diagnostics(project, None, "smoke")
    assert s.categorical
    frame = _frame(MAX_POINTS + 1000)
    frame.loc[:9, "dust"] = np.nan  # incomplete rows are neither drawn nor counted
    picture = data_picture(s, project, None, frame)
    assert isinstance(picture, BoxPicture)
    complete = frame.dropna()
    counts = complete["smoke"].value_counts()
    assert picture.tick_labels == (
        f"never\n(reference)\nn = {counts['never']:,}",
        f"current\nn = {counts['current']:,}",
        f"former\nn = {counts['former']:,}",
    )
    assert sum(len(g) for g in picture.groups) == MAX_POINTS
    assert (picture.x_label, picture.y_label) == (s.label, s.exposure_label)
    assert reference_first(project, None, "smoke", frame["smoke"]) == [
        "never",
        "current",
        "former",
    ]


def test_categorical_exposure_gets_boxes_of_the_covariate(project):
    project.update_settings(column_types={**project.analysis.column_types, "dust": "binary"})
    s = node_diagnostics(project, None, "age")
    frame = _frame(200)
    frame["dust"] = (frame["dust"] > 0).astype(int)
    picture = data_picture(s, project, None, frame)
    assert isinstance(picture, BoxPicture)
    assert [label.split("\n")[0] for label in picture.tick_labels] == ["0", "1"]
    assert np.allclose(picture.groups[1], frame.loc[frame["dust"] == 1, "age"])
    assert (picture.x_label, picture.y_label) == (s.exposure_label, "Age")


def test_both_categorical_get_stacked_shares(project):
    project.update_settings(column_types={**project.analysis.column_types, "dust": "binary"})
    s = node_diagnostics(project, None, "smoke")
    frame = _frame(400)
    frame["dust"] = (frame["dust"] > 0).astype(int)
    picture = data_picture(s, project, None, frame)
    assert isinstance(picture, SharesPicture)
    # Both in the order the models compare them, reference first (as the boxes):
    # smoking's reference is "never" in the demo project.
    assert picture.categories == ("never", "current", "former")
    name = s.exposure_label
    assert [label for label, _ in picture.stacks] == ["0", "1"]
    assert picture.legend_title == name
    totals = np.sum([shares for _, shares in picture.stacks], axis=0)
    assert np.allclose(totals, 1.0)
    current = frame[frame["smoke"] == "current"]
    assert picture.stacks[1][1][1] == pytest.approx(current["dust"].mean())
    assert picture.y_label == f"share by {name}"
    project.update_settings(reference_levels={**project.analysis.reference_levels, "dust": "1"})
    flipped = data_picture(s, project, None, frame)
    assert isinstance(flipped, SharesPicture)
    assert [label for label, _ in flipped.stacks] == ["1", "0"]
    assert flipped.stacks[0][1] == picture.stacks[1][1]


def test_unbound_covariate_gets_a_sentence(project):
    s = node_diagnostics(project, None, "early_life")
    picture = data_picture(s, project, None, _frame(10))
    assert isinstance(picture, PlotMessage)
    assert "Bind the exposure and this covariate" in picture.text
    assert isinstance(
        data_picture(node_diagnostics(project, None, "age"), project, None, None), PlotMessage
    )


def test_endpoint_distribution_counts_or_histogram(project):
    frame = _frame(500)
    frame["lungfn"] = np.random.default_rng(2).integers(0, 4, size=500)
    outcome = endpoint_diagnostics(project, None, "lungfn")
    counts = distribution_picture(outcome, project, None, frame)
    assert isinstance(counts, CountPicture)
    assert counts.values == ("0", "1", "2", "3")
    assert sum(counts.counts) == 500
    assert counts.title == f"Distribution of {outcome.label}"
    exposure = endpoint_diagnostics(project, None, "dust")
    histogram = distribution_picture(exposure, project, None, frame)
    assert isinstance(histogram, HistogramPicture)
    assert (len(histogram.values), histogram.bins) == (500, 40)
    assert (histogram.x_label, histogram.y_label) == ("dust", "rows")
    assert distribution_picture(exposure, project, None, None) == PlotMessage("No data bound")


def test_the_dialog_picture_reads_the_analytic_sample(demo_study, demo_folder):
    project, result, js = demo_study
    s = node_diagnostics(project, result, "income")
    frame = pd.read_csv(demo_folder / "demo_cohort.csv")
    picture = sample_picture(s, project, None, frame, result.sample)
    assert isinstance(picture, ScatterPicture)
    assert len(picture.x) == js["sample"]["used"]
    assert "random sample" not in picture.title
    # before an analysis there is no sample: every complete row of the file
    everything = sample_picture(s, project, None, frame, None)
    assert isinstance(everything, ScatterPicture)
    assert len(everything.x) == len(frame[["dust", "income"]].dropna())


def test_headings_and_the_models_caption(demo_study):
    project, result, js = demo_study
    s = node_diagnostics(project, result, "income")
    assert covariate_heading(s) == "Income — covariate (column income)"
    unbound = node_diagnostics(project, result, "early_life")
    assert covariate_heading(unbound).endswith("— covariate (no column)")
    used = js["sample"]["used"]
    assert estimates_caption(s, result.sample) == (
        f"Estimates: {result.effect_measure}; the same {used:,} rows in every model."
    )
    assert estimates_caption(node_diagnostics(project, None, "income"), None) == ""
    outcome = endpoint_diagnostics(project, result, "lungfn")
    assert endpoint_heading(outcome) == f"{outcome.title} (column lungfn)"


def test_modification_strata_are_named_with_their_rows():
    from covariscope.views.modification import ModificationView

    points = (("never", 1.2, 0.9, 1.6, 1200), ("current", 2.0, 1.4, 2.9, 15300))
    view = ModificationView("Smoking", points, True, "risk ratio", "")
    assert view.tick_labels == ("never\nn = 1,200", "current\nn = 15,300")
    assert view.null == 1.0
    difference = ModificationView("Smoking", points, False, "mean difference", "")
    assert difference.null == 0.0


def test_the_demo_modification_picture_matches_its_points(demo_study):
    project, result, _ = demo_study
    views = [node_diagnostics(project, result, n).modification for n in result.modification]
    shown = [v for v in views if v is not None]
    assert shown, "the demo examines effect modification for some covariate"
    for view in shown:
        assert len(view.tick_labels) == len(view.points)
        assert all(
            label.endswith(f"n = {p[4]:,}")
            for label, p in zip(view.tick_labels, view.points, strict=True)
        )


def test_each_plot_is_saved_beside_the_chosen_file():
    from pathlib import Path

    from covariscope.views.plots import plot_path

    assert plot_path(Path("/out/age.svg"), "data") == Path("/out/age-data.svg")
    assert plot_path(Path("/out/age"), "estimates") == Path("/out/age-estimates.png")

import datetime as dt
import json
from decimal import Decimal

import plotly.graph_objects as go
import pytest

from fleetcare import charts


def test_tukey_fences_use_the_quartiles_and_one_and_a_half_interquartile_ranges():
    # Quartiles of 1..8 by the inclusive method: 2.75, 4.5, 6.25 (Python statistics.quantiles docs' method);
    # fences at 1.5 IQR beyond them (Tukey's rule, common statistical convention).
    assert charts.tukey_fences([1, 2, 3, 4, 5, 6, 7, 8]) == (2.75, 4.5, 6.25, -2.5, 11.5)


def test_the_box_whiskers_reach_the_lowest_and_highest_values_so_nothing_is_hidden():
    fig = charts.box_with_outliers([("48 V", [("Jan", [10, 11, 12, 13, 40])], [("Jan", 40, "B-7")])], "t", "mL")
    box = fig["data"][0]
    assert box["upperfence"] == [40] and box["lowerfence"] == [10]
    assert (box["q1"], box["median"], box["q3"]) == ([11], [12], [13])
    assert fig["data"][1]["text"] == ["B-7"]


EVERY_HELPER = {
    "line": lambda: charts.line([("B-1", ["2026-01-01", "2026-01-08"], [80, 90.5])], "SOC<br><sup>x</sup>", "%",
                                y_range=(0, 105)),
    "bars": lambda: charts.bars(["2026-01", "2026-02"], [3, 4], "Water", "mL", series_name="Water"),
    "horizontal bars": lambda: charts.bars(["a", "b"], [1, 2], "t", "n", horizontal=True, text=["1", "2"]),
    "stacked bars": lambda: charts.stacked_bars(["T1", "T2"], [("Night", [1, 0], None), ("Day", [2, 3], "/")],
                                                "Deep", "Readings", barmode="group"),
    "box": lambda: charts.box_with_outliers([("48 V", [("Jan", [1, 2, 3, 9])], [("Jan", 9, "B-7")])], "W", "mL"),
    "line with guide": lambda: charts.reference_line(charts.line([("B", [1, 2], [20, 30])], "Spread", "pts"), 20,
                                                     "20 points: equalizing charge due"),
    "heatmap": lambda: charts.heatmap(["1 Mar 26", "8 Mar 26"], ["Cell 1", "Cell 2"], [[1.28, None], [1.25, 1.26]],
                                      "SG", "SG", zmin=1.1, zmax=1.3, marks=[("1 Mar 26", "Cell 2")], marks_name="Low"),
}


@pytest.mark.parametrize("name", EVERY_HELPER)
def test_every_chart_is_a_figure_that_plotly_itself_accepts(name):
    # plotly.graph_objects.Figure validates every property against plotly's schema and raises on
    # an unknown property or a bad value, so the plain dicts are real plotly figures.
    fig = EVERY_HELPER[name]()
    validated = go.Figure(json.loads(charts.to_json(fig)))
    assert len(validated.data) == len(fig["data"])
    assert validated.layout.title.text == fig["layout"]["title"]["text"]


def test_a_figure_with_an_unknown_property_is_refused_by_that_check():
    fig = charts.bars(["a"], [1], "t", "n")
    fig["data"][0]["colour"] = "red"
    with pytest.raises(ValueError):
        go.Figure(fig)


def test_dates_and_decimals_go_into_the_json_as_plotly_reads_them():
    fig = charts.line([("B", [dt.datetime(2026, 3, 1, 7, 30, tzinfo=dt.UTC)], [Decimal("81.5")])], "t", "%")
    trace = json.loads(charts.to_json(fig))["data"][0]
    assert trace["x"] == ["2026-03-01T07:30:00+00:00"] and trace["y"] == [81.5]


def test_the_guide_line_spans_the_plot_at_its_value_with_its_meaning_beside_it():
    fig = charts.reference_line(charts.line([("B", [1], [1])], "t", "y"), 20, "20 points")
    validated = go.Figure(fig)
    (shape,) = validated.layout.shapes
    assert (shape.y0, shape.y1, shape.x0, shape.x1, shape.xref) == (20, 20, 0, 1, "x domain")
    assert validated.layout.annotations[0].text == "20 points"


def test_labels_from_data_reach_plotly_as_plain_text():
    evil = '<a href="https://evil.example/">B02</a>'
    fig = charts.box_with_outliers(
        [(f"Truck {evil}", [("2026-01", [1.0, 2.0, 3.0, 2.5])], [("2026-01", 9.0, evil)])],
        f"Water per cell<br><sup><b>{evil}</b></sup>", "mL",
    )
    sent = charts.to_json(fig)
    assert "<a" not in sent and "<b>" not in sent
    assert "&lt;a href=\\\"https://evil.example/\\\"&gt;B02&lt;/a&gt;" in sent
    assert "Water per cell<br><sup>&lt;b&gt;" in sent  # our own line break and superscript stay
    assert "%{text} %{y}<extra></extra>" in sent  # our own hover template stays
    go.Figure(json.loads(sent))

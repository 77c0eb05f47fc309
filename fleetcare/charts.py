"""The one place plotly figures are built. Pages embed them as JSON; static/js/charts.js draws them.

Figures are plotly's own JSON form ({"data": [...], "layout": {...}}) written as plain dicts: the
graph_objects classes validate every property as it is set, which cost about 12 ms a chart, a fifth
of the overview's time at fleet scale. tests/dashboard/test_charts.py passes every helper's output
through plotly.graph_objects.Figure, which validates it against plotly's schema.
"""

import datetime as dt
import json
from decimal import Decimal
from statistics import quantiles

import plotly.io as pio

# plotly's "plotly_white" look, taken from the installed package once.
TEMPLATE = pio.templates["plotly_white"].to_plotly_json()

FONT = dict(family="system-ui, -apple-system, Segoe UI, Roboto, sans-serif", size=14)
PATTERNS = ("", "/", ".", "x", "\\", "+", "-", "|")
SYMBOLS = ("circle", "square", "diamond", "triangle-up", "x", "cross", "star", "hexagon")


def _axis_title(text):
    return {} if text is None else {"title": {"text": text}}


def _figure(traces, title, x_title=None, y_title=None, height=320, **layout):
    return {
        "data": traces,
        "layout": {
            "template": TEMPLATE,
            "title": {"text": title, "x": 0, "xanchor": "left"},
            "font": FONT,
            "height": height,
            "margin": {"l": 60, "r": 20, "t": 80 if "<br>" in title else 50, "b": 50},
            "xaxis": _axis_title(x_title),
            "yaxis": _axis_title(y_title),
            "legend": {"orientation": "h", "y": -0.2},
            **layout,
        },
    }


def line(series, title, y_title, x_title=None, y_range=None, markers=True, height=320):
    """series: [(name, xs, ys)]; each series gets its own marker symbol so colour is not the only cue."""
    traces = [
        {
            "type": "scatter",
            "x": list(xs),
            "y": list(ys),
            "name": name,
            "mode": "lines+markers" if markers else "lines",
            "marker": {"symbol": SYMBOLS[i % len(SYMBOLS)], "size": 7},
        }
        for i, (name, xs, ys) in enumerate(series)
    ]
    fig = _figure(traces, title, x_title, y_title, height)
    if y_range:
        fig["layout"]["yaxis"]["range"] = list(y_range)
    return fig


def bars(categories, values, title, y_title, x_title=None, text=None, horizontal=False, height=320, series_name=None):
    labels = text if text is not None else [str(v) for v in values]
    trace = {"type": "bar", "text": list(labels), "textposition": "auto"}
    if horizontal:
        trace.update(y=list(categories), x=list(values), orientation="h")
    else:
        trace.update(x=list(categories), y=list(values))
    if series_name is not None:
        trace["name"] = series_name
    return _figure([trace], title, x_title, y_title, height)


def stacked_bars(categories, stacks, title, y_title, x_title=None, height=320, barmode="stack"):
    """stacks: [(name, values, pattern)] with a fill pattern per stack, readable without colour.
    A pattern of None picks the next one from PATTERNS; barmode="group" puts the bars side by side."""
    traces = []
    for i, (name, values, pattern) in enumerate(stacks):
        pattern = PATTERNS[i % len(PATTERNS)] if pattern is None else pattern
        traces.append(
            {
                "type": "bar",
                "x": list(categories),
                "y": list(values),
                "name": name,
                "marker": {"pattern": {"shape": pattern}},
                "text": [str(v) if v else "" for v in values],
                "textposition": "inside" if barmode == "stack" else "outside",
            }
        )
    return _figure(traces, title, x_title, y_title, height, barmode=barmode, showlegend=True)


def tukey_fences(values):
    """(q1, median, q3, low fence, high fence): values beyond the fences, 1.5 interquartile ranges
    past the quartiles, are outliers (Tukey's rule, a common statistical convention)."""
    q1, median, q3 = quantiles(values, n=4, method="inclusive")
    reach = 1.5 * (q3 - q1)
    return q1, median, q3, q1 - reach, q3 + reach


def box_with_outliers(series, title, y_title, x_title=None, height=380):
    """series: [(name, groups, outliers)] with groups [(category, values)] and outliers [(category, value,
    label)]. Each category gets one box per series, side by side in legend order, whiskers reaching the
    lowest and highest value (nothing is hidden); outliers sit beside their box as marked points, named
    where a label is given, so the batteries that stand out are named, not just coloured. Only box
    statistics and outliers are sent, never every value."""
    traces = []
    for n, (name, groups, outliers) in enumerate(series):
        stats = {"x": [], "q1": [], "median": [], "q3": [], "lowerfence": [], "upperfence": []}
        for category, values in groups:
            if len(values) < 2:
                continue
            q1, median, q3, _low, _high = tukey_fences(values)
            for key, value in zip(stats, (category, q1, median, q3, min(values), max(values))):
                stats[key].append(value)
        traces.append({"type": "box", "name": name, "offsetgroup": str(n), "legendgroup": str(n), **stats})
        if outliers:
            traces.append(
                {
                    "type": "scatter",
                    "x": [o[0] for o in outliers],
                    "y": [o[1] for o in outliers],
                    "text": [o[2] for o in outliers],
                    "mode": "markers+text",
                    "textposition": "middle right",
                    "name": f"{name}: stands out",
                    "offsetgroup": str(n),
                    "legendgroup": str(n),
                    "showlegend": False,
                    "marker": {
                        "symbol": SYMBOLS[(n + 2) % len(SYMBOLS)], "size": 10, "line": {"width": 1, "color": "black"},
                    },
                    "hovertemplate": "%{text} %{y}<extra></extra>",
                }
            )
    fig = _figure(traces, title, x_title, y_title, height, boxmode="group", scattermode="group")
    fig["layout"]["xaxis"]["type"] = "category"
    return fig


def reference_line(fig, y, label, above=False):
    """A dashed horizontal guide across the plot with its meaning written beside it (below the line, or above it
    where two guides lie close together)."""
    layout = fig["layout"]
    layout.setdefault("shapes", []).append(
        {
            "type": "line", "xref": "x domain", "x0": 0, "x1": 1, "yref": "y", "y0": y, "y1": y,
            "line": {"dash": "dash", "color": "#495057"},
        }
    )
    layout.setdefault("annotations", []).append(
        {
            "text": label, "showarrow": False, "xref": "x domain", "x": 1, "xanchor": "right",
            "yref": "y", "y": y, "yanchor": "bottom" if above else "top", "bgcolor": "rgba(255,255,255,0.85)",
        }
    )
    return fig


def heatmap(
    x_labels,
    y_labels,
    z,
    title,
    colorbar_title,
    zmin=None,
    zmax=None,
    height=420,
    text_format=".3f",
    marks=None,
    marks_name="",
):
    """marks: [(x, y)] cells to flag with a white-edged ×, so the pattern reads without colour."""
    trace = {
        "type": "heatmap",
        "x": list(x_labels),
        "y": list(y_labels),
        "z": z,
        "colorscale": "Viridis",
        "colorbar": {"title": {"text": colorbar_title}},
        "hoverongaps": False,
        "hovertemplate": "%{y}, %{x}: %{z:" + text_format + "}<extra></extra>",
    }
    if zmin is not None:
        trace["zmin"] = zmin
    if zmax is not None:
        trace["zmax"] = zmax
    traces = [trace]
    if marks:
        traces.append(
            {
                "type": "scatter",
                "x": [m[0] for m in marks],
                "y": [m[1] for m in marks],
                "mode": "markers",
                "name": marks_name,
                "marker": {"symbol": "x-thin", "size": 9, "line": {"width": 2, "color": "white"}},
                "hoverinfo": "skip",
            }
        )
    fig = _figure(traces, title, None, None, height)
    fig["layout"]["yaxis"].update(autorange="reversed", type="category", dtick=1)
    fig["layout"]["xaxis"]["type"] = "category"
    return fig


def _plain(value):
    if isinstance(value, (dt.datetime, dt.date, dt.time)):
        return value.isoformat()
    if isinstance(value, Decimal):
        return float(value)
    raise TypeError(f"{type(value).__name__} cannot go into a chart")


# plotly draws a little HTML in any label (<a href>, <b>, <span style>, entities). Our own hover templates
# are the only markup we send whole; every other string (serials, truck numbers, names, titles) goes as plain
# text, keeping only the harmless line breaks and sub/superscripts our titles are written with.
OWN_MARKUP = {"hovertemplate", "texttemplate"}
KEPT_TAGS = {f"&lt;{tag}&gt;": f"<{tag}>" for tag in ("br", "sup", "/sup", "sub", "/sub")}


def _as_plain_text(value, key=None):
    if isinstance(value, str):
        if key in OWN_MARKUP:
            return value
        text = value.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
        for escaped, tag in KEPT_TAGS.items():
            text = text.replace(escaped, tag)
        return text
    if isinstance(value, dict):
        return {k: v if k == "template" else _as_plain_text(v, k) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_as_plain_text(v, key) for v in value]
    return value


def to_json(fig):
    """The figure for the page, every label in it plain text."""
    return json.dumps(_as_plain_text(fig), default=_plain, separators=(",", ":"))

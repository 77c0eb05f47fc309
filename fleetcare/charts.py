"""The one place plotly figures are built. Pages embed them as JSON; static/js/charts.js draws them."""

from statistics import quantiles

import plotly.graph_objects as go
import plotly.io as pio

# Set once, so each new figure takes the template without re-validating it (about 25 ms a figure otherwise).
pio.templates.default = "plotly_white"

FONT = dict(family="system-ui, -apple-system, Segoe UI, Roboto, sans-serif", size=14)
PATTERNS = ("", "/", ".", "x", "\\", "+", "-", "|")
SYMBOLS = ("circle", "square", "diamond", "triangle-up", "x", "cross", "star", "hexagon")


def _layout(fig, title, x_title=None, y_title=None, height=320):
    fig.update_layout(
        title=dict(text=title, x=0, xanchor="left"),
        font=FONT,
        height=height,
        margin=dict(l=60, r=20, t=80 if "<br>" in title else 50, b=50),
        xaxis_title=x_title,
        yaxis_title=y_title,
        legend=dict(orientation="h", y=-0.2),
    )
    return fig


def line(series, title, y_title, x_title=None, y_range=None, markers=True, height=320):
    """series: [(name, xs, ys)]; each series gets its own marker symbol so colour is not the only cue."""
    fig = go.Figure()
    for i, (name, xs, ys) in enumerate(series):
        fig.add_trace(
            go.Scatter(
                x=list(xs),
                y=list(ys),
                name=name,
                mode="lines+markers" if markers else "lines",
                marker=dict(symbol=SYMBOLS[i % len(SYMBOLS)], size=7),
            )
        )
    if y_range:
        fig.update_yaxes(range=list(y_range))
    return _layout(fig, title, x_title, y_title, height)


def bars(categories, values, title, y_title, x_title=None, text=None, horizontal=False, height=320, series_name=None):
    labels = text if text is not None else [str(v) for v in values]
    if horizontal:
        trace = go.Bar(
            y=list(categories), x=list(values), orientation="h", text=labels, textposition="auto", name=series_name
        )
    else:
        trace = go.Bar(x=list(categories), y=list(values), text=labels, textposition="auto", name=series_name)
    fig = go.Figure(trace)
    return _layout(fig, title, x_title, y_title, height)


def stacked_bars(categories, stacks, title, y_title, x_title=None, height=320, barmode="stack"):
    """stacks: [(name, values, pattern)] with a fill pattern per stack, readable without colour.
    A pattern of None picks the next one from PATTERNS; barmode="group" puts the bars side by side."""
    fig = go.Figure()
    for i, (name, values, pattern) in enumerate(stacks):
        pattern = PATTERNS[i % len(PATTERNS)] if pattern is None else pattern
        fig.add_trace(
            go.Bar(
                x=list(categories),
                y=list(values),
                name=name,
                marker_pattern_shape=pattern,
                text=[str(v) if v else "" for v in values],
                textposition="inside" if barmode == "stack" else "outside",
            )
        )
    fig.update_layout(barmode=barmode, showlegend=True)
    return _layout(fig, title, x_title, y_title, height)


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
    fig = go.Figure()
    for n, (name, groups, outliers) in enumerate(series):
        stats = {"x": [], "q1": [], "median": [], "q3": [], "lowerfence": [], "upperfence": []}
        for category, values in groups:
            if len(values) < 2:
                continue
            q1, median, q3, _low, _high = tukey_fences(values)
            for key, value in zip(stats, (category, q1, median, q3, min(values), max(values))):
                stats[key].append(value)
        fig.add_trace(go.Box(name=name, offsetgroup=str(n), legendgroup=str(n), **stats))
        if outliers:
            fig.add_trace(
                go.Scatter(
                    x=[o[0] for o in outliers],
                    y=[o[1] for o in outliers],
                    text=[o[2] for o in outliers],
                    mode="markers+text",
                    textposition="middle right",
                    name=f"{name}: stands out",
                    offsetgroup=str(n),
                    legendgroup=str(n),
                    showlegend=False,
                    marker=dict(symbol=SYMBOLS[(n + 2) % len(SYMBOLS)], size=10, line=dict(width=1, color="black")),
                    hovertemplate="%{text} %{y}<extra></extra>",
                )
            )
    fig.update_layout(boxmode="group", scattermode="group")
    fig.update_xaxes(type="category")
    return _layout(fig, title, x_title, y_title, height)


def reference_line(fig, y, label):
    """A dashed horizontal guide with its meaning written beside it."""
    fig.add_hline(
        y=y,
        line_dash="dash",
        line_color="#495057",
        annotation_text=label,
        annotation_position="bottom right",
        annotation_bgcolor="rgba(255,255,255,0.85)",
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
    fig = go.Figure(
        go.Heatmap(
            x=list(x_labels),
            y=list(y_labels),
            z=z,
            zmin=zmin,
            zmax=zmax,
            colorscale="Viridis",
            colorbar=dict(title=colorbar_title),
            hoverongaps=False,
            hovertemplate="%{y}, %{x}: %{z:" + text_format + "}<extra></extra>",
        )
    )
    if marks:
        fig.add_trace(
            go.Scatter(
                x=[m[0] for m in marks],
                y=[m[1] for m in marks],
                mode="markers",
                name=marks_name,
                marker=dict(symbol="x-thin", size=9, line=dict(width=2, color="white")),
                hoverinfo="skip",
            )
        )
    fig.update_yaxes(autorange="reversed", type="category", dtick=1)
    fig.update_xaxes(type="category")
    return _layout(fig, title, None, None, height)


def to_json(fig):
    return fig.to_json()

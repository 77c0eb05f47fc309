"""The one place plotly figures are built. Pages embed them as JSON; static/js/charts.js draws them."""
import plotly.graph_objects as go

FONT = dict(family="system-ui, -apple-system, Segoe UI, Roboto, sans-serif", size=14)


def _layout(fig, title, x_title=None, y_title=None, height=320):
    fig.update_layout(
        title=dict(text=title, x=0, xanchor="left"), font=FONT, height=height,
        margin=dict(l=60, r=20, t=50, b=50), template="plotly_white",
        xaxis_title=x_title, yaxis_title=y_title, legend=dict(orientation="h", y=-0.2),
    )
    return fig


def line(series, title, y_title, x_title=None, y_range=None, markers=True, height=320):
    """series: [(name, xs, ys)]; each series gets its own marker symbol so colour is not the only cue."""
    fig = go.Figure()
    symbols = ["circle", "square", "diamond", "triangle-up", "x", "cross"]
    for i, (name, xs, ys) in enumerate(series):
        fig.add_trace(go.Scatter(
            x=list(xs), y=list(ys), name=name, mode="lines+markers" if markers else "lines",
            marker=dict(symbol=symbols[i % len(symbols)], size=7),
        ))
    if y_range:
        fig.update_yaxes(range=list(y_range))
    return _layout(fig, title, x_title, y_title, height)


def bars(categories, values, title, y_title, x_title=None, text=None, horizontal=False, height=320, series_name=None):
    labels = text if text is not None else [str(v) for v in values]
    if horizontal:
        trace = go.Bar(y=list(categories), x=list(values), orientation="h", text=labels, textposition="auto", name=series_name)
    else:
        trace = go.Bar(x=list(categories), y=list(values), text=labels, textposition="auto", name=series_name)
    fig = go.Figure(trace)
    return _layout(fig, title, x_title, y_title, height)


def stacked_bars(categories, stacks, title, y_title, x_title=None, height=320):
    """stacks: [(name, values, pattern)] with a fill pattern per stack, readable without colour."""
    fig = go.Figure()
    for name, values, pattern in stacks:
        fig.add_trace(go.Bar(x=list(categories), y=list(values), name=name, marker_pattern_shape=pattern,
                             text=[str(v) if v else "" for v in values], textposition="inside"))
    fig.update_layout(barmode="stack")
    return _layout(fig, title, x_title, y_title, height)


def heatmap(x_labels, y_labels, z, title, colorbar_title, zmin=None, zmax=None, height=420, text_format=".3f"):
    fig = go.Figure(go.Heatmap(
        x=list(x_labels), y=list(y_labels), z=z, zmin=zmin, zmax=zmax, colorscale="Viridis",
        colorbar=dict(title=colorbar_title), hoverongaps=False,
        hovertemplate="%{y}, %{x}: %{z:" + text_format + "}<extra></extra>",
    ))
    fig.update_yaxes(autorange="reversed", type="category")
    fig.update_xaxes(type="category")
    return _layout(fig, title, None, None, height)


def to_json(fig):
    return fig.to_json()

from django import template
from django.utils.html import format_html, format_html_join
from django.utils.safestring import mark_safe

from fleetcare.accounts.roles import SUPERVISOR, has_role
from fleetcare.charts import to_json
from fleetcare.dashboard import landing

register = template.Library()

_JSON_ESCAPES = {ord(">"): "\\u003E", ord("<"): "\\u003C", ord("&"): "\\u0026"}


@register.simple_tag
def chart(fig, element_id, label=""):
    """A plotly figure as a div plus its JSON; static/js/charts.js draws it (no inline script, CSP-safe)."""
    if fig is None:
        return ""
    payload = to_json(fig).translate(_JSON_ESCAPES)
    return format_html(
        '<div class="fc-chart" id="{}" data-figure="{}-data" role="figure" aria-label="{}"></div>'
        '<script type="application/json" id="{}-data">{}</script>',
        element_id, element_id, label, element_id, mark_safe(payload),
    )


@register.simple_tag
def count_cells(row):
    """A row of the overview's count table: a cell per site and one for all of them, each count a link to the list
    of those batteries (marked when it needs someone to act), a zero plain. One tag for the row rather than a
    template loop per cell: with a hundred sites the table has thousands of cells."""
    flag = mark_safe('<span class="fc-flag" aria-hidden="true">!</span>') if row["attention"] else ""
    link_class = "fc-count fc-attention" if row["attention"] else "fc-count"
    last = len(row["cells"]) - 1

    def cell(n, c):
        where = "text-end fc-all" if n == last else "text-end"
        if not c["count"]:
            return (where, mark_safe('<span class="fc-zero">0</span>'))
        return (where, format_html('<a class="{}" href="{}" aria-label="{}: {} at {}">{}{}</a>', link_class, c["url"],
                                   row["label"], c["count"], c["where"], flag, c["count"]))

    return format_html_join("\n", '<td class="{}">{}</td>', (cell(n, c) for n, c in enumerate(row["cells"])))


@register.filter
def points(sg):
    """1.265 -> '1.265' with three decimals; None -> an en dash."""
    if sg is None or sg == "":
        return "–"
    return f"{float(sg):.3f}"


@register.filter
def sg_points(difference):
    """An SG difference in points (0.001): 0.025 -> '25', 0.0325 -> '32.5' (a median of two cells ends in a half);
    None -> an en dash."""
    if difference is None or difference == "":
        return "–"
    value = round(float(difference) * 1000, 1)
    return f"{value:.0f}" if value == int(value) else f"{value:.1f}"


@register.filter
def pct(value):
    if value is None or value == "":
        return "–"
    return f"{float(value):.0f} %"


@register.filter
def can_see_settings(user):
    """Supervisors and up see the settings in force."""
    return bool(getattr(user, "is_authenticated", False)) and has_role(user, SUPERVISOR)


@register.filter
def sees_overview(user):
    """Whether the menu offers the overview (the crew's front page is today's work: dashboard.landing)."""
    return bool(getattr(user, "is_authenticated", False)) and landing.sees_overview(user)

"""manage.py plan --site SITE --days N --json."""
import json
from io import StringIO

import pytest
from django.core.management import CommandError, call_command

from fleetcare.planner.models import StoredPlan


def run(*args):
    out = StringIO()
    call_command("plan", *args, stdout=out)
    return out.getvalue()


def test_it_prints_the_plan_as_json(warehouse):
    data = json.loads(run("--site", "tw", "--days", "14", "--json", "--solver-seconds", "2"))
    assert data["site"] == "tw" and data["days"] == 14 and data["timezone"] == "Europe/London"
    assert data["limit_violations"] == []
    equalize = [t for t in data["tasks"] if t["kind"] == "equalize"]
    assert len(equalize) == 14 and all(t["start"].endswith("T22:00:00") for t in equalize)
    assert {"serial", "day", "start", "end", "due_day", "days_overdue", "reason"} <= set(equalize[0])
    assert StoredPlan.objects.filter(days=14).count() == 1


def test_it_prints_a_readable_plan_without_json(warehouse):
    text = run("--site", "tw", "--days", "7")
    assert text.startswith("Test warehouse: 7 days from")
    assert "equalize  TW-F001" in text


def test_its_readable_plan_says_how_the_order_was_chosen_without_solver_terms(warehouse):
    text = run("--site", "tw", "--days", "7")
    assert "order" in text.splitlines()[0] and "Days late, all batteries together: " in text
    for word in ("integer program", "HiGHS", "proven", "lower bound", "severity", "solver", "wave"):
        assert word not in text


@pytest.mark.parametrize("days", ["6", "29", "0"])
def test_it_refuses_days_outside_7_to_28(warehouse, days):
    with pytest.raises(CommandError, match="--days must be between 7 and 28"):
        run("--site", "tw", "--days", days)


def test_it_names_the_known_sites_for_an_unknown_one(warehouse, other_site):
    with pytest.raises(CommandError, match="No site with code “nowhere”. Known codes: other, tr, tw"):
        run("--site", "nowhere")


def test_it_says_why_a_site_without_shift_windows_cannot_be_planned(other_site):
    with pytest.raises(CommandError, match="No shift windows"):
        run("--site", "other")

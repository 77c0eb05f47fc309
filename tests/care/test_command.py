"""`manage.py findings`: check the fleet, then print every open finding (JSON with --json)."""
import datetime as dt
import json
from decimal import Decimal
from io import StringIO

import pytest
from django.core.management import CommandError, call_command
from django.utils import timezone

from fleetcare.care.models import Finding
from tests.care.helpers import inspect, sgs


def run(*args):
    out = StringIO()
    call_command("findings", *args, stdout=out)
    return out.getvalue()


@pytest.fixture
def troubled(battery, sealed_battery, crew, watered):
    recently = timezone.now() - dt.timedelta(hours=6)
    inspect(battery, crew, recently, cells=sgs(low={9: "1.245"}))
    inspect(sealed_battery, crew, recently, situation="rested", volts={1: "12.80", 2: "12.55"},
            hours_since_charge=Decimal("12"))


def test_it_prints_every_open_finding_as_json(troubled):
    rows = json.loads(run("--json"))
    by_kind = {(r["battery"], r["kind"]): r for r in rows}
    assert set(by_kind) == {("TW-001", "weak_cell"), ("TW-001", "high_spread"), ("TR-P01", "weak_block")}
    weak = by_kind[("TW-001", "weak_cell")]
    assert weak["positions"] == [9] and weak["position_kind"] == "cell" and weak["state"] == "open"
    assert dt.datetime.fromisoformat(weak["opened_at"])
    assert weak["evidence"]["threshold"] == {
        "name": "weak_cell_below_mean_sg", "label": "weak cell: below the other cells' mean after a charge",
        "value": "0.030", "unit": "SG", "source": "common practice (field notes)", "default": "0.030",
        "default_source": "common practice (field notes)",
    }
    assert weak["evidence"]["readings"][0]["cells"][0]["sg_corrected"] == 1.245
    block = by_kind[("TR-P01", "weak_block")]
    assert block["positions"] == [2] and block["position_kind"] == "block"


def test_running_it_twice_stores_no_duplicates(troubled):
    run("--json")
    assert len(json.loads(run("--json"))) == 3
    assert Finding.objects.count() == 3


def test_it_limits_to_one_site(troubled):
    rows = json.loads(run("--json", "--site", "tr"))
    assert [(r["battery"], r["kind"]) for r in rows] == [("TR-P01", "weak_block")]


def test_an_unknown_site_is_an_error(db):
    with pytest.raises(CommandError, match="No site with code 'nope'"):
        run("--site", "nope")


def test_the_plain_listing_says_how_many(troubled):
    out = run()
    assert "TW-001       Weak cell cell 9 [Open]" in out
    assert out.strip().endswith("3 open findings.")

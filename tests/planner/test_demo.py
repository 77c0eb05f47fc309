"""The demo shows a believable day: work at each warehouse, the closing reading after last night's equalizing charge."""

from django.utils import timezone

from fleetcare.planner import solver
from fleetcare.demo import fleet as fleet_demo
from fleetcare.fleet.models import Site
from fleetcare.planner import demo
from fleetcare.planner import inputs as planner_inputs
from fleetcare.planner.selectors import site_days


def test_the_demo_plan_keeps_every_limit_and_gives_the_crew_a_list(db):
    fleet_demo.load()
    assert demo.load() is True
    assert demo.load() is False  # once only
    now = timezone.now()
    hrw = Site.objects.get(code="hrw")
    entry = planner_inputs.build([hrw], now, 14)[hrw.pk]
    plan = solver.plan_care(entry.inputs, solver_seconds=2)
    assert solver.check_limits(plan, entry.inputs) == []
    day = site_days(Site.objects.filter(code__in=["hrw", "psd", "elm"]), now)
    hrw_tasks = {(t.battery.serial, t.kind) for t in day[hrw.pk].to_do}
    assert ("HRW-B03", "all_cells") in hrw_tasks  # equalized early this morning, closing reading still to take
    assert any(kind == "equalize" for _, kind in hrw_tasks)
    elm = Site.objects.get(code="elm")
    assert not [t for t in day[elm.pk].tasks if t.kind in ("equalize", "water")]  # sealed pairs

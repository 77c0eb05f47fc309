"""Detection runs when an inspection or a top-up is saved (readings signals, sent on commit)."""
import datetime as dt

from django.utils import timezone

from fleetcare.care.models import Finding
from tests.care.helpers import inspect, sgs, water


def test_saving_an_inspection_opens_its_findings(battery, crew, watered, django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        inspect(battery, crew, timezone.now() - dt.timedelta(hours=1), cells=sgs(low={9: "1.245"}))
    assert set(Finding.objects.filter(battery=battery).values_list("kind", flat=True)) == {"weak_cell", "high_spread"}


def test_saving_a_top_up_clears_a_low_level(battery, crew, watered, django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        inspect(battery, crew, timezone.now() - dt.timedelta(hours=5), cells=sgs(), levels={4: "low"})
    finding = Finding.objects.get(battery=battery, kind="low_level")
    with django_capture_on_commit_callbacks(execute=True):
        water(battery, crew, timezone.now() - dt.timedelta(hours=1), 600)
    finding.refresh_from_db()
    assert finding.state == Finding.State.CLEARED


def test_removing_the_reading_that_showed_a_fault_clears_it(battery, crew, supervisor, watered,
                                                            django_capture_on_commit_callbacks):
    from fleetcare.readings.services import remove_inspection

    with django_capture_on_commit_callbacks(execute=True):
        wrong = inspect(battery, crew, timezone.now() - dt.timedelta(hours=1), cells=sgs(low={9: "1.245"}))
    assert Finding.objects.active().filter(battery=battery).count() == 2
    with django_capture_on_commit_callbacks(execute=True):
        remove_inspection(wrong, user=supervisor, reason="Typed into the wrong battery")
    assert Finding.objects.active().filter(battery=battery).count() == 0


def test_an_imported_file_is_checked_once_for_all_its_batteries(battery, crew, watered,
                                                                django_capture_on_commit_callbacks):
    from fleetcare.fleet.models import Battery
    from fleetcare.readings.csv_io import import_readings

    taken = timezone.localtime(timezone.now() - dt.timedelta(hours=2)).strftime("%Y-%m-%dT%H:%M")
    rows = "".join(f"TW-001,{taken},charged,{n},{'1.245' if n == 9 else '1.285'},25,,ok\n" for n in range(1, 25))
    with django_capture_on_commit_callbacks(execute=True) as callbacks:
        import_readings("serial,taken_at,situation,cell,sg,temp,volts,level\n" + rows, user=crew,
                        batteries=Battery.objects.all())
    assert len(callbacks) == 1
    weak = Finding.objects.get(battery=battery, kind="weak_cell")
    assert weak.positions == [9]

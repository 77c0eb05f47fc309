"""Property-based checks of the entry forms and the CSV import: bad input -> a clear message and nothing
stored; good input -> stored exactly as entered. Bounded (max_examples) so the suite stays quick."""
import datetime as dt
import itertools
import uuid
from decimal import Decimal

from django.urls import reverse
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from fleetcare.fleet.access import visible_batteries
from fleetcare.readings.csv_io import import_readings
from fleetcare.readings.models import CellReading, Inspection, WaterTopUp

SETTINGS = settings(max_examples=50, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
CELLS = 24  # TW-001 in tests/conftest.py
minutes = itertools.count(1)  # each example gets its own time, so a CSV re-import never looks like a resend

sg_points = st.integers(min_value=1000, max_value=1350)
sg_styles = st.sampled_from(["decimal", "four", "points"])  # 1.265, 1265, 265: how crews type it


def as_typed(points, style):
    return {"decimal": f"{points / 1000:.3f}", "four": str(points), "points": f"{points - 1000:03d}"}[style]


temps_c = st.decimals(min_value=Decimal("-30"), max_value=Decimal("70"), places=1)
malformed_numbers = st.sampled_from(["", "abc", "1..2", "NaN", "Infinity", "-", "1e400", "12,5,1", "1 265"])
bad_sg = st.one_of(
    st.integers(min_value=1351, max_value=1999).map(lambda n: f"{n / 1000:.3f}"),
    st.integers(min_value=0, max_value=999).map(lambda n: f"0.{n:03d}"),
    st.integers(min_value=10000, max_value=99999999).map(str),  # too many digits to be points
    st.from_regex(r"[A-Za-z#*?!]{1,6}", fullmatch=True),
    malformed_numbers.filter(bool),
)
bad_temp = st.one_of(
    st.decimals(min_value=Decimal("70.1"), max_value=Decimal("9999.9"), places=1).map(str),
    st.decimals(min_value=Decimal("-9999.9"), max_value=Decimal("-30.1"), places=1).map(str),
    st.sampled_from(["abc", "NaN", "Infinity", "1e400", "25.55", "--3"]),
)


def inspection_post(sgs, temp, **extra):
    data = {"situation": "charged", "scope": "all", "taken_at": "2026-11-30T06:15", "temp": temp,
            "client_uuid": str(uuid.uuid4()), "notes": ""}
    data.update({f"sg_{n}": value for n, value in enumerate(sgs, start=1)})
    data.update(extra)
    return data


# Inside TW-001's plausible band (discharged 1.140 to full 1.290, each widened by 0.030): a tray of
# such values, every cell confirmed where it is unlike the others, is stored as typed.
band_points = st.integers(min_value=1110, max_value=1320)


@SETTINGS
@given(readings=st.lists(st.tuples(band_points, sg_styles), min_size=CELLS, max_size=CELLS), temp=temps_c)
def test_good_cell_readings_are_stored_exactly(crew_client, battery, readings, temp):
    confirmations = {f"confirm_{n}": "on" for n in range(1, CELLS + 1)}
    data = inspection_post([as_typed(points, style) for points, style in readings], str(temp), **confirmations)
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]), data)
    assert response.status_code == 302
    stored = Inspection.objects.get(client_uuid=data["client_uuid"])
    assert stored.temp_c == temp
    assert list(stored.cells.order_by("position").values_list("sg", flat=True)) == [
        Decimal(points) / 1000 for points, _ in readings
    ]


@SETTINGS
@given(position=st.integers(min_value=1, max_value=CELLS), bad=bad_sg, temp=temps_c)
def test_a_bad_cell_reading_is_named_beside_its_box_and_nothing_is_stored(crew_client, battery, position, bad, temp):
    points = ["1.265"] * CELLS
    points[position - 1] = bad
    before = Inspection.objects.count()
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]), inspection_post(points, str(temp)))
    assert response.status_code == 200
    errors = response.context["form"].errors
    assert list(errors) == [f"sg_{position}"]
    assert errors[f"sg_{position}"][0]  # a message, not just a red box
    assert "Nothing was saved" in response.content.decode()
    assert Inspection.objects.count() == before


@SETTINGS
@given(bad=bad_temp)
def test_a_bad_temperature_is_refused_and_nothing_is_stored(crew_client, battery, bad):
    before = Inspection.objects.count()
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]), inspection_post(["1.265"] * CELLS, bad))
    assert response.status_code == 200
    message = response.context["form"].errors["temp"][0]
    assert message in ("Enter a number.", "Electrolyte temperature must be between −30 and 70 °C.",
                       "Ensure that there are no more than 1 decimal place.",
                       "Ensure that there are no more than 5 digits in total.",
                       "Ensure that there are no more than 4 digits before the decimal point.")
    assert Inspection.objects.count() == before


@SETTINGS
@given(text=st.text(max_size=12))
def test_any_text_in_a_cell_box_is_either_a_reading_in_range_or_a_message(crew_client, battery, text):
    points = ["1.265"] * CELLS
    points[0] = text
    data = inspection_post(points, "25")
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]), data)
    if response.status_code == 302:
        sg = CellReading.objects.get(inspection__client_uuid=data["client_uuid"], position=1).sg
        assert Decimal("1.000") <= sg <= Decimal("1.350")
    else:
        assert response.context["form"].errors["sg_1"][0]
        assert not Inspection.objects.filter(client_uuid=data["client_uuid"]).exists()


def top_up_post(volume, per_cell=False):
    data = {"done_at": "2026-11-30T08:00", "volume": volume, "water_type": "distilled", "notes": "",
            "client_uuid": str(uuid.uuid4())}
    if per_cell:
        data["per_cell"] = "on"
    return data


@SETTINGS
@given(litres=st.decimals(min_value=Decimal("0.001"), max_value=Decimal("48"), places=3))
def test_a_good_top_up_is_stored_exactly_in_millilitres(crew_client, battery, litres):
    data = top_up_post(str(litres))
    assert crew_client.post(reverse("readings:top_up", args=[battery.pk]), data).status_code == 302
    stored = WaterTopUp.objects.get(client_uuid=data["client_uuid"])
    assert stored.volume_ml == (litres * 1000).quantize(Decimal("0.1"))
    assert stored.volume_entered == f"{litres} L"


@SETTINGS
@given(bad=st.one_of(
    st.decimals(min_value=Decimal("-100"), max_value=Decimal("0"), places=3).map(str),
    st.decimals(min_value=Decimal("48.001"), max_value=Decimal("99999.999"), places=3).map(str),  # over 2 L a cell
    st.decimals(min_value=Decimal("0.0001"), max_value=Decimal("9"), places=4).filter(lambda d: d.as_tuple().exponent == -4).map(str),
    malformed_numbers,
))
def test_a_bad_top_up_is_refused_beside_the_amount_and_nothing_is_stored(crew_client, battery, bad):
    before = WaterTopUp.objects.count()
    response = crew_client.post(reverse("readings:top_up", args=[battery.pk]), top_up_post(bad))
    assert response.status_code == 200
    assert response.context["form"].errors["volume"][0]
    assert "Nothing was saved" in response.content.decode()
    assert WaterTopUp.objects.count() == before


@SETTINGS
@given(litres=st.decimals(min_value=Decimal("0.001"), max_value=Decimal("5"), places=3))
def test_a_sealed_battery_refuses_any_amount(crew_client, sealed_battery, litres):
    # Sealed blocks have no water screen: a post to it goes back to the block voltages and stores nothing.
    response = crew_client.post(reverse("readings:top_up", args=[sealed_battery.pk]), top_up_post(str(litres)))
    assert response.status_code == 302
    assert response["Location"] == reverse("readings:inspect", args=[sealed_battery.pk])
    assert not WaterTopUp.objects.exists()


def csv_rows(sgs, temps, taken_at, serial="TW-001"):
    lines = ["serial,taken_at,situation,cell,sg,temp,volts,level"]
    lines += [f"{serial},{taken_at},charged,{n},{sg},{temp},,ok" for n, (sg, temp) in enumerate(zip(sgs, temps), start=1)]
    return "\n".join(lines) + "\n"


def fresh_time():
    return (dt.datetime(2026, 1, 1, 6, 0) + dt.timedelta(minutes=next(minutes))).strftime("%Y-%m-%dT%H:%M")


@SETTINGS
@given(sgs=st.lists(sg_points, min_size=CELLS, max_size=CELLS), temps=st.lists(temps_c, min_size=CELLS, max_size=CELLS))
def test_a_good_csv_is_stored_exactly(crew, battery, sgs, temps):
    text = csv_rows([f"{n / 1000:.3f}" for n in sgs], temps, fresh_time())
    report = import_readings(text, user=crew, batteries=visible_batteries(crew))
    assert report.errors == []
    assert report.inspections_created == 1
    stored = Inspection.objects.latest("recorded_at", "pk")
    cells = list(stored.cells.order_by("position"))
    assert [c.sg for c in cells] == [Decimal(n) / 1000 for n in sgs]
    assert [c.temp_c for c in cells] == temps


BAD_CELLS = {
    "serial": st.sampled_from(["", "NO-SUCH", "OT-001"]),  # OT-001 belongs to another site
    "taken_at": st.sampled_from(["", "yesterday", "2026-13-01T06:00", "2099-01-01T06:00", "30/11/2026"]),
    "situation": st.sampled_from(["", "flat", "charging", "0"]),
    "cell": st.sampled_from(["", "0", "25", "-1", "1.5", "x"]),
    "sg": bad_sg,
    "temp": bad_temp.filter(lambda t: t not in ("25.55",)),  # the CSV keeps any number of decimals
    "level": st.sampled_from(["full", "LOWISH", "?"]),
}
COLUMN_INDEX = {"serial": 0, "taken_at": 1, "situation": 2, "cell": 3, "sg": 4, "temp": 5, "level": 7}


@SETTINGS
@given(row=st.integers(min_value=1, max_value=CELLS), column=st.sampled_from(sorted(BAD_CELLS)), data=st.data())
def test_one_bad_value_anywhere_in_a_csv_stores_nothing_and_names_its_line(crew, battery, other_battery, row, column, data):
    bad = data.draw(BAD_CELLS[column], label=column)
    assume(not (column == "sg" and bad == ""))
    lines = csv_rows(["1.265"] * CELLS, ["25"] * CELLS, fresh_time()).splitlines()
    fields = lines[row].split(",")
    fields[COLUMN_INDEX[column]] = bad.replace(",", ";")
    lines[row] = ",".join(fields)
    before = Inspection.objects.count()
    report = import_readings("\n".join(lines) + "\n", user=crew, batteries=visible_batteries(crew))
    assert not report.imported
    assert report.errors
    assert all(message for _, message in report.errors)
    assert row + 1 in [line for line, _ in report.errors]  # line 1 is the header
    assert Inspection.objects.count() == before


@SETTINGS
@given(text=st.text(max_size=300))
def test_any_text_as_a_csv_never_crashes_and_stores_nothing_unless_clean(crew, battery, text):
    before = Inspection.objects.count()
    report = import_readings(text, user=crew, batteries=visible_batteries(crew))
    if report.errors:
        assert Inspection.objects.count() == before


def test_a_csv_with_old_mac_line_endings_imports(crew, battery):
    """Found by the property above: a bare carriage return used to crash the import."""
    text = csv_rows(["1.265"] * CELLS, ["25"] * CELLS, fresh_time()).replace("\n", "\r")
    report = import_readings(text, user=crew, batteries=visible_batteries(crew))
    assert report.errors == []
    assert report.inspections_created == 1


def test_an_unreadable_csv_gets_a_message_and_stores_nothing(crew, battery):
    text = "serial,taken_at,situation,cell,sg\n" + '"' + "x" * 200_000 + '"\n'  # over csv's field size limit
    report = import_readings(text, user=crew, batteries=visible_batteries(crew))
    assert report.errors[0][1].startswith("the file cannot be read as CSV (field larger than field limit")
    assert not Inspection.objects.exists()

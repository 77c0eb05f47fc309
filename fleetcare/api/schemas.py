"""What the API takes and gives, as pydantic schemas (they become the OpenAPI document)."""
import datetime as dt
import uuid
from typing import Annotated, Literal, Optional, Union

from ninja import Field, Schema
from pydantic import StrictFloat, StrictInt, StrictStr

# A number as JSON (never true/false: a boolean is not a volume) or as the crew types it ("265", "4,8", "").
NUMBER_TEXT = r"^\s*([+-]?([0-9]{1,9}([.,][0-9]{0,9})?|[.,][0-9]{1,9}))?\s*$"
NumberText = Annotated[StrictStr, Field(pattern=NUMBER_TEXT, max_length=24)]


def number(low, high, above_low=False):
    """A JSON number from low (or above it) to high, the widest any site's unit allows (the form checks the
    site's own limits), or the same as text."""
    bounds = Field(gt=low, le=high) if above_low else Field(ge=low, le=high)
    return Union[Annotated[StrictInt, bounds], Annotated[StrictFloat, bounds], NumberText]


Situation = Literal["charged", "equalized", "rested", "in_use", "before_charge"]
Scope = Literal["all", "pilot"]
WaterType = Literal["distilled", "deionised", "other"]
ChosenOnTablet = Literal["scan", "search", "today", "page"]
ChosenVia = Literal["scan", "search", "today", "page", "api", "import", "unknown"]


class ErrorOut(Schema):
    detail: str = Field(description="One sentence for a person.")
    errors: dict[str, list[str]] = Field(
        default_factory=dict,
        description="Messages per field, keyed like the tablet form: temp, taken_at, sg_3 (cell 3), volts_2 "
                    "(block 2), low_3; __all__ for the whole submission.",
    )


class MeOut(Schema):
    username: str
    name: str
    role: Literal["crew", "supervisor", "manager", "administrator"]
    sites: list[str] = Field(description="Codes of the sites you see.")


class SiteOut(Schema):
    code: str
    name: str
    timezone: str
    temp_unit: Literal["C", "F"] = Field(description="Unit the site reads electrolyte temperature in.")
    volume_unit: Literal["L", "floz"] = Field(description="Unit the site measures water in.")


class ProfileOut(Schema):
    id: int
    name: str
    maker: str
    technology: Literal["flooded", "agm", "gel"]
    application: Literal["traction", "mobility"]
    nominal_voltage: float
    monoblocks: int
    cells_per_block: int
    cell_count: int
    positions: int = Field(description="Entry boxes of an all-cell reading: cells (flooded) or blocks (sealed).")
    reads_by_block: bool
    capacity_ah: float
    full_charge_sg: Optional[float]
    discharged_sg: Optional[float]
    watering_allowed: bool
    equalizing_allowed: bool


class BatteryOut(Schema):
    id: int
    serial: str
    site: str = Field(description="Site code.")
    profile: int = Field(description="Profile id (see /api/profiles).")
    status: Literal["in_service", "charging", "spare", "repair", "retired"]
    pilot_cell: int
    positions: int
    reads_by_block: bool
    vehicle: Optional[str] = Field(description="Asset number of the truck or chair it is fitted to now.")
    inspect_url: str
    top_up_url: str


class CellIn(Schema):
    position: int = Field(ge=1, le=80, description="Cell number (flooded) or block number (sealed).")
    sg: Optional[number(0, 1350)] = Field(
        None, description="Observed SG as the crew says it: \"265\", \"1265\" or \"1.265\" all mean 1.265.")
    low: bool = Field(False, description="Electrolyte below the level mark.")
    confirmed: bool = Field(
        False, description="The crew confirmed this cell's SG although it is unlike the rest of the tray (more than "
                           "0.020 above or 0.050 below the median of the other cells by default, or outside the "
                           "profile's plausible band). Without it such a cell is refused with 422, naming the cell.")
    volts: Optional[number(0, 100)] = Field(None, description="Block voltage (sealed blocks).")


class InspectionIn(Schema):
    client_uuid: uuid.UUID = Field(
        description="Made by the client once per reading; the same UUID twice stores one inspection.")
    situation: Situation
    scope: Scope = "all"
    taken_at: str = Field(
        description="ISO 8601 date and time; without an offset it is the battery's site local time.",
        json_schema_extra={"format": "date-time"},
    )
    temp: Optional[number(-40, 160)] = Field(None, description="Electrolyte temperature in the site's unit.")
    hydrometer_compensated: bool = False
    hours_since_charge: Optional[number(0, 100000)] = None
    notes: str = Field("", max_length=4000)
    cells: list[CellIn] = Field(default_factory=list, max_length=80)
    chosen_via: Optional[ChosenOnTablet] = Field(
        None, description="FleetCare's own tablet says how its user picked the battery (a scanned label, a search, "
                          "today's work, the battery's page). Other programs leave it out: their readings are "
                          "recorded as sent by another program (api).")


class CellOut(Schema):
    position: int
    sg: Optional[float]
    sg_corrected: Optional[float]
    volts: Optional[float]
    level: Literal["ok", "low", ""]


class InspectionOut(Schema):
    id: int
    client_uuid: uuid.UUID
    battery: int
    serial: str
    taken_at: dt.datetime
    taken_by: str
    situation: Situation
    scope: Scope
    temp_c: Optional[float]
    hydrometer_compensated: bool
    hours_since_charge: Optional[float]
    notes: str
    sg_mean: Optional[float]
    sg_min: Optional[float]
    sg_max: Optional[float]
    sg_spread: Optional[float]
    lowest_position: Optional[int]
    volts_total: Optional[float]
    soc_percent: Optional[float]
    soc_basis: Literal["sg", "ocv", ""]
    chosen_via: ChosenVia
    is_current: bool
    recorded_at: dt.datetime
    cells: list[CellOut]
    url: str


class TopUpIn(Schema):
    client_uuid: uuid.UUID = Field(description="Made by the client once per top-up; the same UUID twice stores one.")
    done_at: str = Field(description="ISO 8601; without an offset it is the site's local time.",
                         json_schema_extra={"format": "date-time"})
    volume: number(0, 100000, above_low=True) = Field(description="Water added, in the site's volume unit (litres or US fl oz).")
    per_cell: bool = Field(False, description="The volume went into each cell, not the whole battery.")
    before_charge: bool = False
    water_type: WaterType = "distilled"
    notes: str = Field("", max_length=4000)


class TopUpOut(Schema):
    id: int
    client_uuid: uuid.UUID
    battery: int
    serial: str
    done_at: dt.datetime
    done_by: str
    volume_ml: float = Field(description="Water added to the whole battery, millilitres.")
    volume_entered: str
    before_charge: bool
    water_type: WaterType
    notes: str
    recorded_at: dt.datetime


class ReadingSummary(Schema):
    id: int
    taken_at: dt.datetime
    situation: Situation
    scope: Scope
    soc_percent: Optional[float]
    soc_basis: Literal["sg", "ocv", ""]
    sg_mean: Optional[float]
    sg_spread: Optional[float]
    lowest_position: Optional[int]
    volts_total: Optional[float]


class FindingOut(Schema):
    id: int
    kind: str
    title: str
    state: Literal["open", "acknowledged"]
    severity: int = Field(description="1 note, 2 warning, 3 urgent.")
    positions: list[int]
    opened_at: dt.datetime
    summary: str


class WorkDueOut(Schema):
    kind: str
    title: str
    due: dt.datetime = Field(description="Planned start, or the start of the day it fell due if not planned yet.")
    due_day: dt.date = Field(description="The day it falls due at the battery's site.")
    days_overdue: int = Field(description="Whole days past that day (0 when due today or later).")


class StatusOut(Schema):
    battery: int
    serial: str
    status: str
    latest: Optional[ReadingSummary] = Field(description="The latest current inspection of any kind.")
    latest_all_cells: Optional[ReadingSummary] = Field(description="The latest all-cell inspection: its spread.")
    last_top_up: Optional[dt.datetime]
    open_findings: list[FindingOut]
    next_work_due: list[WorkDueOut] = Field(description="The battery's work as the planner has it due.")


class TaskOut(Schema):
    kind: Literal["equalize", "water", "all_cells", "pilot"]
    title: str
    battery: int
    serial: str
    site: str = Field(description="Site code.")
    vehicle: str = Field(description="Truck or chair the battery is fitted to, if any.")
    due_day: dt.date
    days_overdue: int
    severity: int
    why: str
    start: Optional[dt.datetime] = Field(description="Planned start (equalizing and watering), if planned.")
    end: Optional[dt.datetime]
    status: Literal["to_do", "skipped", "not_planned"] = Field(
        description="not_planned: due, but no charger, airflow or spare battery is free for it in the plan.")
    skip_reason: str
    not_planned_reason: str
    entry_url: str = Field(description="The page where the crew logs it.")


class OfflinePagesOut(Schema):
    pages: list[str] = Field(description="Pages (and the battery list) a tablet keeps for use without a connection.")
    assets: list[str] = Field(description="Styles, scripts and icons those pages need.")

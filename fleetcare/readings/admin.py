from django.contrib import admin

from fleetcare.readings.models import CellReading, Inspection, WaterTopUp


class CellReadingInline(admin.TabularInline):
    model = CellReading
    extra = 0
    readonly_fields = ["sg_corrected"]


@admin.register(Inspection)
class InspectionAdmin(admin.ModelAdmin):
    list_display = ["battery", "taken_at", "situation", "scope", "soc_percent", "sg_spread", "is_current"]
    list_filter = ["situation", "scope", "battery__site"]
    search_fields = ["battery__serial"]
    inlines = [CellReadingInline]
    readonly_fields = ["sg_mean", "sg_min", "sg_max", "sg_spread", "lowest_position", "volts_total", "soc_percent", "soc_basis"]


@admin.register(WaterTopUp)
class WaterTopUpAdmin(admin.ModelAdmin):
    list_display = ["battery", "done_at", "volume_ml", "water_type", "before_charge"]
    list_filter = ["battery__site"]

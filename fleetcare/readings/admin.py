from django.contrib import admin

from fleetcare.readings.models import CellReading, Inspection, ReadingChange, WaterTopUp


class ReadOnlyAdmin:
    """Readings are corrected as new revisions on the reading's own page, never edited in place here."""

    def has_add_permission(self, request, obj=None):
        return False

    def has_change_permission(self, request, obj=None):
        return False

    def has_delete_permission(self, request, obj=None):
        return False


class CellReadingInline(ReadOnlyAdmin, admin.TabularInline):
    model = CellReading
    extra = 0


@admin.register(Inspection)
class InspectionAdmin(ReadOnlyAdmin, admin.ModelAdmin):
    list_display = ["battery", "taken_at", "situation", "scope", "soc_percent", "sg_spread", "is_current"]
    list_filter = ["situation", "scope", "battery__site"]
    search_fields = ["battery__serial"]
    inlines = [CellReadingInline]


@admin.register(WaterTopUp)
class WaterTopUpAdmin(ReadOnlyAdmin, admin.ModelAdmin):
    list_display = ["battery", "done_at", "volume_ml", "water_type", "before_charge"]
    list_filter = ["battery__site"]


@admin.register(ReadingChange)
class ReadingChangeAdmin(ReadOnlyAdmin, admin.ModelAdmin):
    list_display = ["changed_at", "battery", "action", "inspection", "top_up", "changed_by", "reason"]
    list_filter = ["action", "battery__site"]
    search_fields = ["battery__serial", "reason", "changed_by__username"]

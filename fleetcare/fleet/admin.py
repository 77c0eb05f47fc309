from django.contrib import admin

from fleetcare.fleet.models import Battery, BatteryProfile, ChargingRoom, Fitting, ShiftWindow, Site, Vehicle


class ShiftWindowInline(admin.TabularInline):
    model = ShiftWindow
    extra = 0


class ChargingRoomInline(admin.TabularInline):
    model = ChargingRoom
    extra = 0


@admin.register(Site)
class SiteAdmin(admin.ModelAdmin):
    list_display = ["name", "code", "kind", "timezone", "temp_unit", "volume_unit"]
    filter_horizontal = ["members"]
    inlines = [ChargingRoomInline, ShiftWindowInline]


@admin.register(BatteryProfile)
class BatteryProfileAdmin(admin.ModelAdmin):
    list_display = ["name", "technology", "application", "nominal_voltage", "cell_count", "capacity_ah", "unit_price"]
    list_filter = ["technology", "application"]


class FittingInline(admin.TabularInline):
    model = Fitting
    extra = 0


@admin.register(Battery)
class BatteryAdmin(admin.ModelAdmin):
    list_display = ["serial", "profile", "site", "status", "in_service_date"]
    list_filter = ["site", "status", "profile"]
    search_fields = ["serial"]
    inlines = [FittingInline]


@admin.register(Vehicle)
class VehicleAdmin(admin.ModelAdmin):
    list_display = ["asset_number", "kind", "site", "active"]
    list_filter = ["site", "kind"]
    search_fields = ["asset_number"]

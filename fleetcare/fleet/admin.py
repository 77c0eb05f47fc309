from django.contrib import admin
from django.contrib.auth import get_user_model
from django.contrib.auth.admin import UserAdmin

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


class SiteMembershipInline(admin.TabularInline):
    model = Site.members.through
    extra = 1
    verbose_name = "site membership"
    verbose_name_plural = "sites this person works at"


User = get_user_model()
admin.site.unregister(User)


@admin.register(User)
class FleetCareUserAdmin(UserAdmin):
    inlines = [SiteMembershipInline]
    list_display = ["username", "first_name", "last_name", "is_active", "last_login"]
    list_filter = ["groups", "is_active", "sites"]

from django.contrib import admin

from fleetcare.planner.models import EqualizingCharge, EqualizingReading, Policy, RoomSettings, SiteSettings, TaskSkip


@admin.register(Policy)
class PolicyAdmin(admin.ModelAdmin):
    list_display = ("__str__", "profile", "site", "equalize_every_days", "water_every_days", "note")


@admin.register(SiteSettings)
class SiteSettingsAdmin(admin.ModelAdmin):
    list_display = ("site", "waterings_per_day")
    readonly_fields = ("feed_token",)


@admin.register(RoomSettings)
class RoomSettingsAdmin(admin.ModelAdmin):
    list_display = ("room", "charging_at_once", "baseline_airflow_m3h", "note")


class ReadingInline(admin.TabularInline):
    model = EqualizingReading
    extra = 0


@admin.register(EqualizingCharge)
class EqualizingChargeAdmin(admin.ModelAdmin):
    list_display = ("battery", "started_at", "ended_at", "by")
    inlines = [ReadingInline]


@admin.register(TaskSkip)
class TaskSkipAdmin(admin.ModelAdmin):
    list_display = ("battery", "kind", "day", "reason", "by")

from django.contrib import admin

from fleetcare.api.models import ApiToken


@admin.register(ApiToken)
class ApiTokenAdmin(admin.ModelAdmin):
    list_display = ("user", "name", "prefix", "created_at", "last_used_at", "revoked_at")
    list_filter = ("revoked_at",)
    readonly_fields = ("prefix", "digest", "created_at", "last_used_at")
    search_fields = ("user__username", "name", "prefix")

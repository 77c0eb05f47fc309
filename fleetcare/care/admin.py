from django.contrib import admin
from django.utils.html import format_html, format_html_join

from fleetcare.care.models import Finding, Policy
from fleetcare.care.policy import THRESHOLDS


@admin.register(Finding)
class FindingAdmin(admin.ModelAdmin):
    list_display = ("battery", "kind", "positions", "state", "severity", "persistent", "opened_at", "last_seen_at")
    list_filter = ("state", "kind", "severity", "battery__site")
    search_fields = ("battery__serial", "summary")
    readonly_fields = [f.name for f in Finding._meta.fields]

    def has_add_permission(self, request):
        return False


@admin.register(Policy)
class PolicyAdmin(admin.ModelAdmin):
    list_display = ("__str__", "site", "profile", "note")
    list_filter = ("site", "profile")
    readonly_fields = ("defaults_and_sources",)
    fieldsets = (
        (None, {"fields": ("site", "profile", "note", "defaults_and_sources")}),
        ("Thresholds (blank: use the profile's policy, or the default)", {"fields": [t.name for t in THRESHOLDS]}),
    )

    @admin.display(description="Built-in defaults")
    def defaults_and_sources(self, obj=None):
        rows = format_html_join(
            "", "<tr><td>{}</td><td>{} {}</td><td>{}</td></tr>",
            ((t.label, t.default, t.unit, t.source) for t in THRESHOLDS),
        )
        return format_html(
            '<table><thead><tr><th>Threshold</th><th>Default</th><th>Source</th></tr></thead><tbody>{}</tbody></table>'
            "<p>Order: default, then the profile's policy, then the site's, then the site-and-profile policy.</p>", rows,
        )

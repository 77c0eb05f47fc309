from django.contrib import admin
from django.contrib.auth import get_user_model
from django.contrib.auth.admin import UserAdmin

from fleetcare.accounts.models import SignInFailure
from fleetcare.fleet.models import Site


class ReadOnlyAdmin(admin.ModelAdmin):
    """Failed sign-ins are only ever added to, by the sign-in throttle."""

    def has_add_permission(self, request):
        return False

    def has_change_permission(self, request, obj=None):
        return False

    def has_delete_permission(self, request, obj=None):
        return False


@admin.register(SignInFailure)
class SignInFailureAdmin(ReadOnlyAdmin):
    list_display = ["failed_at", "username", "ip_address"]
    search_fields = ["username", "ip_address"]

    def has_delete_permission(self, request, obj=None):
        return request.user.is_superuser  # lifting a pause early: delete that username's rows


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

from django.contrib import admin

from fleetcare.accounts.models import SignInFailure


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

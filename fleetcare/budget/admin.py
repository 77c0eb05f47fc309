from django.contrib import admin

from fleetcare.budget.models import BudgetAssumptions, CapacityTest, Policy, ProfileBudget


@admin.register(CapacityTest)
class CapacityTestAdmin(admin.ModelAdmin):
    list_display = ["battery", "tested_on", "percent_of_rated", "tested_by"]
    list_filter = ["battery__site"]
    search_fields = ["battery__serial"]
    date_hierarchy = "tested_on"
    raw_id_fields = ["battery"]


@admin.register(BudgetAssumptions)
class BudgetAssumptionsAdmin(admin.ModelAdmin):
    list_display = ["__str__", "currency", "installation_cost", "escalation_percent", "fiscal_year_start_month",
                    "updated_at"]
    readonly_fields = ["updated_at", "updated_by"]

    def has_add_permission(self, request):
        return not BudgetAssumptions.objects.exists()


@admin.register(ProfileBudget)
class ProfileBudgetAdmin(admin.ModelAdmin):
    list_display = ["profile", "unit_price", "typical_depth_percent"]


@admin.register(Policy)
class PolicyAdmin(admin.ModelAdmin):
    list_display = ("__str__", "site", "profile", "note")
    list_filter = ("site", "profile")

from django import forms
from django.contrib import admin

from survey import models
from survey.forms.signin import ThrottledAdminAuthenticationForm

# The admin signs in through the same throttle as everyone (survey.backends); this form
# says how long to wait instead of "wrong password" while it refuses.
admin.site.login_form = ThrottledAdminAuthenticationForm


class CriteriaTableAdminForm(forms.ModelForm):
    class Meta:
        model = models.CriteriaTable
        fields = ["organization", "key", "name", "source", "rows", "copied_from"]

    def clean(self):
        from survey.services.criteria_tables import validate_table_rows

        data = super().clean()
        if "rows" in data and data.get("key"):
            data["rows"] = validate_table_rows(key=data["key"], rows=data["rows"])
        return data


@admin.register(models.CriteriaTable)
class CriteriaTableAdmin(admin.ModelAdmin):
    form = CriteriaTableAdminForm
    list_display = ["name", "key", "organization", "updated_at"]
    list_filter = ["organization"]


@admin.register(models.AuditEvent)
class AuditEventAdmin(admin.ModelAdmin):
    list_display = ["at", "organization", "actor", "action", "object_type", "object_id"]
    list_filter = ["organization", "action"]


for model in [
    models.Organization,
    models.Member,
    models.Client,
    models.Site,
    models.Asset,
    models.Survey,
    models.Conditions,
    models.Thermogram,
    models.Mark,
    models.Finding,
    models.HeatLossEstimate,
]:
    admin.site.register(model)

from django.contrib import admin

from survey import models


@admin.register(models.CriteriaTable)
class CriteriaTableAdmin(admin.ModelAdmin):
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

from django.contrib import admin

from .models import Profile


@admin.register(Profile)
class ProfileAdmin(admin.ModelAdmin):
    list_display = ["user", "work_list_subscribed", "work_list_hour", "work_list_days_ahead"]
    filter_horizontal = ["sites"]
    search_fields = ["user__username", "user__last_name"]

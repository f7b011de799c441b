from django.urls import path

from . import views

app_name = "fleet"
urlpatterns = [
    path("units/", views.unit_list, name="unit_list"),
    path("units/<int:pk>/", views.unit_detail, name="unit_detail"),
]

from django.urls import path

from . import not_done_views, views

app_name = "workorders"
urlpatterns = [
    path("", views.my_work, name="my_work"),
    path("all/", views.work_order_list, name="list"),
    path("<int:pk>/", views.detail, name="detail"),
    path("<int:pk>/job/", views.job_save, name="job_save"),
    path("<int:pk>/tasks/add/", views.task_add, name="task_add"),
    path("<int:pk>/close/", views.close, name="close"),
    path("<int:pk>/override/", views.override, name="override"),
    path("tasks/<int:pk>/save/", views.task_save, name="task_save"),
    path("tasks/<int:pk>/not-done/", not_done_views.task_not_done, name="task_not_done"),
    path(
        "tasks/<int:pk>/not-done/undo/",
        not_done_views.task_not_done_undo,
        name="task_not_done_undo",
    ),
]

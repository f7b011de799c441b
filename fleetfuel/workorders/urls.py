app_name = "workorders"
urlpatterns: list = []

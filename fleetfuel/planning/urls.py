app_name = "planning"
urlpatterns: list = []

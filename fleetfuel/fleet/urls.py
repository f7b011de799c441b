app_name = "fleet"
urlpatterns: list = []

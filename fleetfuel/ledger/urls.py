app_name = "ledger"
urlpatterns: list = []

from django.apps import AppConfig


class AccountsConfig(AppConfig):
    name = "fleetfuel.accounts"
    label = "accounts"

from django.apps import AppConfig


class AccountsConfig(AppConfig):
    name = "fleetfuel.accounts"
    label = "accounts"

    def ready(self) -> None:
        from .hygiene import hygiene_install  # AppConfig.ready(): models are loaded now

        hygiene_install()

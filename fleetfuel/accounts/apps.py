from django.apps import AppConfig


class AccountsConfig(AppConfig):
    name = "fleetfuel.accounts"
    label = "accounts"

    def ready(self) -> None:
        # AppConfig.ready(): the models are loaded now.
        from django.contrib.auth.signals import user_logged_in

        from .hygiene import hygiene_install
        from .middleware import session_stamp

        hygiene_install()
        user_logged_in.connect(session_stamp, dispatch_uid="fleetfuel-session-stamp")

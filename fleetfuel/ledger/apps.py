from django.apps import AppConfig


class LedgerConfig(AppConfig):
    name = "fleetfuel.ledger"
    label = "ledger"

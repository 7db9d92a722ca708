from django.apps import AppConfig


class WhatIfConfig(AppConfig):
    """What-if evaluation and safe operating window of semi-batch steps (no models)."""

    name = "hazards.whatif"
    label = "whatif"
    verbose_name = "What-if and operating window"

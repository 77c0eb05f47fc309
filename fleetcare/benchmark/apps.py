from django.apps import AppConfig


class BenchmarkConfig(AppConfig):
    name = "fleetcare.benchmark"
    label = "benchmark"
    verbose_name = "Fleet-scale benchmark"

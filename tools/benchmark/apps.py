from django.apps import AppConfig


class BenchmarkConfig(AppConfig):
    name = "tools.benchmark"
    label = "benchmark"
    verbose_name = "Fleet-scale benchmark"

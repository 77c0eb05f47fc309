"""The layout holds: development tools stay out of production."""
from tests.accounts.test_security_settings import PRODUCTION_ENV, manage

INSTALLED_APPS = "from django.conf import settings; print(*('app=' + app for app in settings.INSTALLED_APPS))"


def installed_apps(**env):
    result = manage("shell", "-c", INSTALLED_APPS, **env)
    assert result.returncode == 0, result.stderr
    return [word.removeprefix("app=") for word in result.stdout.split() if word.startswith("app=")]


def test_production_settings_install_no_development_tool():
    apps = installed_apps(**PRODUCTION_ENV)
    assert "fleetcare.tablet" in apps
    assert [app for app in apps if not app.startswith(("django.", "fleetcare.", "crispy_", "whitenoise.", "django_tasks"))] == []
    assert "Unknown command: 'benchmark'" in manage("benchmark", "--help", **PRODUCTION_ENV).stderr


def test_development_settings_offer_the_benchmark():
    assert "tools.benchmark" in installed_apps()
    assert manage("benchmark", "--help").returncode == 0

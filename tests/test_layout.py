"""The layout holds: development tools stay out of production, and our own apps are never optional."""
import re
import subprocess
import sys
from pathlib import Path

from tests.accounts.test_security_settings import PRODUCTION_ENV, manage

ROOT = Path(__file__).resolve().parents[1]

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


def test_no_app_of_ours_is_imported_as_if_it_might_be_missing():
    guarded = [
        f"{path.relative_to(ROOT)}:{number}"
        for path in sorted((ROOT / "fleetcare").rglob("*.py"))
        for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1)
        if re.search(r"except\s*\(?[\w\s,]*ImportError", line)
    ]
    assert guarded == []


def test_the_apps_import_one_way_only():
    """The contracts in pyproject.toml: chemistry, fleet, readings, care/planner/budget, then the pages."""
    lint = Path(sys.executable).parent / "lint-imports"
    result = subprocess.run([str(lint)], cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert result.returncode == 0, result.stdout[-3000:]
    assert "Contracts: 3 kept, 0 broken." in result.stdout

"""Deploy-ready settings from the environment, and a Content-Security-Policy our pages live within."""
import os
import re
import secrets
import subprocess
import sys
from pathlib import Path

import pytest
from django.urls import reverse

ROOT = Path(__file__).resolve().parents[2]
PRODUCTION_ENV = {
    "FLEETCARE_PRODUCTION": "1",
    "SECRET_KEY": secrets.token_urlsafe(50),
    "ALLOWED_HOSTS": "fleetcare.example.org",
}


def manage(*args, **env):
    """Run manage.py in a fresh interpreter with a minimal environment, so settings come from `env` only."""
    clean = {k: v for k, v in os.environ.items() if k in ("PATH", "HOME", "LANG", "LC_ALL", "PYTHONPATH", "TMPDIR")}
    return subprocess.run(
        [sys.executable, "manage.py", *args], cwd=ROOT, env={**clean, **env}, capture_output=True, text=True, timeout=120,
    )


def production_setting(name, **env):
    code = f"from django.conf import settings; print(repr(settings.{name}))"
    return manage("shell", "-c", code, **env)


def test_check_deploy_reports_nothing_under_production_settings():
    result = manage("check", "--deploy", "--fail-level", "WARNING", **PRODUCTION_ENV)
    assert result.returncode == 0, result.stdout + result.stderr
    assert "System check identified no issues (0 silenced)." in result.stdout


def test_check_deploy_does_complain_about_a_weak_secret_key():
    """The check above can fail: the same command flags a short key."""
    result = manage("check", "--deploy", "--fail-level", "WARNING", **{**PRODUCTION_ENV, "SECRET_KEY": "build-only"})
    assert result.returncode != 0
    assert "security.W009" in result.stderr + result.stdout


def test_production_refuses_to_start_without_a_secret_key():
    env = {k: v for k, v in PRODUCTION_ENV.items() if k != "SECRET_KEY"}
    result = manage("check", **env)
    assert result.returncode != 0
    assert "FLEETCARE_PRODUCTION=1 needs SECRET_KEY in the environment" in result.stderr


@pytest.mark.parametrize(("name", "env", "expected"), [
    ("DEBUG", {}, "False"),
    ("DEBUG", {"DEBUG": "1"}, "True"),
    ("ALLOWED_HOSTS", {}, "['fleetcare.example.org']"),
    ("SESSION_COOKIE_SECURE", {}, "True"),
    ("CSRF_COOKIE_SECURE", {}, "True"),
    ("SECURE_HSTS_SECONDS", {}, "31536000"),
    ("SECURE_SSL_REDIRECT", {}, "True"),
])
def test_production_settings_come_from_the_environment(name, env, expected):
    result = production_setting(name, **PRODUCTION_ENV, **env)
    assert result.returncode == 0, result.stderr
    assert result.stdout.strip().splitlines()[-1] == expected


def test_development_keeps_debug_on_and_cookies_plain():
    result = production_setting("SESSION_COOKIE_SECURE", DEBUG="1")
    assert result.stdout.strip().splitlines()[-1] == "False"


@pytest.mark.parametrize("path", ["/accounts/login/", "/no-such-page/"])
def test_every_response_carries_the_policy(client, db, path):
    policy = client.get(path)["Content-Security-Policy"]
    assert "default-src 'self'" in policy
    assert "script-src 'self';" in policy
    assert "frame-ancestors 'none'" in policy
    assert "connect-src 'self'" in policy
    assert "img-src 'self' data: blob:" in policy
    assert "unsafe-eval" not in policy


def test_signed_in_pages_carry_the_policy_and_other_headers(crew_client, battery):
    response = crew_client.get(reverse("fleet:battery", args=[battery.pk]))
    assert response["Content-Security-Policy"].startswith("default-src 'self'")
    assert response["X-Frame-Options"] == "DENY"
    assert response["X-Content-Type-Options"] == "nosniff"
    assert response["Referrer-Policy"] == "same-origin"


SCRIPT_TAG = re.compile(r"<script\b([^>]*)>", re.IGNORECASE)
EVENT_ATTRIBUTE = re.compile(r"<[a-z][^>]*\son[a-z]+\s*=", re.IGNORECASE)
TEMPLATE_DIRS = [ROOT / "templates", *sorted((ROOT / "fleetcare").glob("*/templates"))]


def template_files():
    return sorted(p for d in TEMPLATE_DIRS for p in d.rglob("*.html"))


def test_there_are_templates_to_scan():
    assert len(template_files()) > 10


def test_no_template_has_inline_script_code():
    """The policy forbids inline scripts: every <script> loads a file, or carries JSON data."""
    offenders = []
    for path in template_files():
        text = path.read_text()
        for match in SCRIPT_TAG.finditer(text):
            attrs = match.group(1)
            if "src=" not in attrs and 'type="application/json"' not in attrs:
                offenders.append(f"{path.relative_to(ROOT)}: <script{attrs}>")
        offenders += [f"{path.relative_to(ROOT)}: inline handler {m.group(0)!r}" for m in EVENT_ATTRIBUTE.finditer(text)]
        if "javascript:" in text.lower():
            offenders.append(f"{path.relative_to(ROOT)}: javascript: URL")
    assert offenders == [], "Move this code to static/js/ (the CSP blocks it):\n" + "\n".join(offenders)


def test_no_template_loads_anything_from_the_internet():
    offenders = [
        f"{p.relative_to(ROOT)}: {m.group(0)}"
        for p in template_files()
        for m in re.finditer(r'(?:src|href)="(?:https?:)?//[^"]+"', p.read_text())
    ]
    assert offenders == []

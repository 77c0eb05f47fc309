"""The app as production runs it: the build script's static files, gunicorn with gunicorn.conf.py, production settings.

Used by the serving tests; everything listens on loopback only and lives in a temporary directory.
"""
import contextlib
import os
import re
import secrets
import socket
import subprocess
import sys
import time
import urllib.error
import urllib.parse
import urllib.request
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
HOST = "127.0.0.1"
DEMO_PASSWORD = "try-fleetcare-2026"


def free_port():
    with socket.socket() as s:
        s.bind((HOST, 0))
        return s.getsockname()[1]


def base_env(**extra):
    keep = ("PATH", "HOME", "LANG", "LC_ALL", "TMPDIR")
    return {**{k: v for k, v in os.environ.items() if k in keep}, **extra}


def run(command, env, timeout=300):
    result = subprocess.run(command, cwd=ROOT, env=env, capture_output=True, text=True, timeout=timeout)
    if result.returncode:
        raise AssertionError(f"{' '.join(map(str, command))} failed:\n{result.stdout}\n{result.stderr}")
    return result


def build_static(static_root):
    """The production build script, into `static_root`."""
    run(["sh", "bin/build"], base_env(PYTHON=sys.executable, STATIC_ROOT=str(static_root)))


def load_world(database_url, demo=True):
    """The demo fleet, or only an administrator `probe` (password DEMO_PASSWORD)."""
    python = sys.executable
    if demo:
        run([python, "manage.py", "demo", "--no-serve"], base_env(DATABASE_URL=database_url))
    else:
        run([python, "manage.py", "migrate", "--noinput"], base_env(DATABASE_URL=database_url))
        run([python, "manage.py", "createsuperuser", "--noinput", "--username", "probe", "--email", "probe@example.org"],
            base_env(DATABASE_URL=database_url, DJANGO_SUPERUSER_PASSWORD=DEMO_PASSWORD))


@contextlib.contextmanager
def production_server(tmp_path, database_url=None, workers=2, static_root=None, **settings):
    """Serve under gunicorn with production settings (building and loading the demo unless given); yield the URL."""
    if static_root is None:
        static_root = tmp_path / "static"
        build_static(static_root)
    if database_url is None:
        database_url = f"sqlite:///{tmp_path / 'served.sqlite3'}"
        load_world(database_url)
    python = sys.executable
    port = free_port()
    env = base_env(
        FLEETCARE_PRODUCTION="1", SECRET_KEY=secrets.token_urlsafe(50), ALLOWED_HOSTS=HOST,
        DATABASE_URL=database_url, STATIC_ROOT=str(static_root), WEB_BIND=f"{HOST}:{port}", WEB_WORKERS=str(workers), **settings,
    )
    log = open(tmp_path / "gunicorn.log", "w")
    gunicorn = str(Path(python).with_name("gunicorn"))
    process = subprocess.Popen([gunicorn, "fleetcare.wsgi:application"], cwd=ROOT, env=env, stdout=log,
                               stderr=subprocess.STDOUT, start_new_session=True)
    try:
        deadline = time.monotonic() + 30
        while True:
            try:
                with socket.create_connection((HOST, port), timeout=1):
                    break
            except OSError:
                if process.poll() is not None or time.monotonic() > deadline:
                    raise AssertionError("gunicorn did not start:\n" + (tmp_path / "gunicorn.log").read_text())
                time.sleep(0.2)
        yield f"http://{HOST}:{port}"
    finally:
        process.terminate()
        try:
            process.wait(timeout=15)
        except subprocess.TimeoutExpired:
            process.kill()
        log.close()


class Browser:
    """Just enough of a browser: cookies by hand (they are Secure, and we speak plain HTTP behind a pretend proxy)."""

    def __init__(self, base):
        self.base = base
        self.cookies = {}

    def request(self, path, data=None, headers=None):
        headers = {"X-Forwarded-Proto": "https", **(headers or {})}
        if self.cookies:
            headers["Cookie"] = "; ".join(f"{k}={v}" for k, v in self.cookies.items())
        body = urllib.parse.urlencode(data).encode() if data is not None else None
        request = urllib.request.Request(self.base + path, data=body, headers=headers)
        opener = urllib.request.build_opener(NoRedirect)
        try:
            response = opener.open(request, timeout=60)
        except urllib.error.HTTPError as error:
            response = error
        for value in response.headers.get_all("Set-Cookie") or []:
            name, _, rest = value.partition("=")
            self.cookies[name.strip()] = rest.split(";", 1)[0]
        return response.status, response.headers, response.read()

    def sign_in(self, username, password=DEMO_PASSWORD):
        status, _, page = self.request("/accounts/login/")
        assert status == 200
        token = re.search(rb'name="csrfmiddlewaretoken" value="([^"]+)"', page).group(1).decode()
        status, headers, _ = self.request(
            "/accounts/login/", {"csrfmiddlewaretoken": token, "username": username, "password": password},
            headers={"Referer": self.base.replace("http://", "https://", 1) + "/accounts/login/"},
        )
        assert status == 302, status
        return headers["Location"]


class NoRedirect(urllib.request.HTTPRedirectHandler):
    def redirect_request(self, *args, **kwargs):
        return None

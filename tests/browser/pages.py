"""Small helpers the browser tests share: signing in and keeping screenshots."""
import re
from pathlib import Path

ARTIFACTS = Path(__file__).resolve().parents[2] / "test-artifacts" / "browser"
PASSWORD = "not-a-real-password-1"  # what tests/conftest.py make_user gives every user


def safe_name(text):
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", text)[:120]


def screenshot(page, name):
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    page.screenshot(path=str(ARTIFACTS / f"{safe_name(name)}.png"), full_page=True)


def sign_in(page, username, password=PASSWORD):
    page.goto("/")
    page.wait_for_url(re.compile(r"/accounts/login/"))
    page.fill("input[name=username]", username)
    page.fill("input[name=password]", password)
    page.get_by_role("button", name="Sign in").click()
    page.wait_for_url(re.compile(r"^(?!.*/accounts/login/)"))


def outbox_count(page):
    """How many entries the tablet holds in its outbox (IndexedDB), waiting to be sent."""
    return page.evaluate("""() => new Promise(resolve => {
        const open = indexedDB.open("fleetcare-offline", 1);
        open.onupgradeneeded = () => open.result.createObjectStore("outbox", {keyPath: "client_uuid"});
        open.onsuccess = () => open.result.transaction("outbox").objectStore("outbox").count().onsuccess =
            event => resolve(event.target.result);
    })""")

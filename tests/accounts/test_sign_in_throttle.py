"""Sign-in pauses that stop password spraying and guessing without letting a stranger lock the real user out.

Real requests through the test client, each from its own address (REMOTE_ADDR, or X-Forwarded-For behind a
trusted proxy); fresh Client objects stand for other people's browsers.
"""
import pytest
from django.test import Client

from fleetcare.accounts import throttle
from fleetcare.accounts.models import SignInFailure
from tests.conftest import make_user

PASSWORD = "not-a-real-password-1"  # tests/conftest.py make_user
LOGIN = "/accounts/login/"
SPRAYED = "Winter2026!"


@pytest.fixture(autouse=True)
def quick_hashing(settings):
    """The pauses do not depend on the hasher; the default one costs a second per attempt on a busy machine."""
    settings.PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]


def sign_in(client, username, password, ip="10.0.0.5", **headers):
    return client.post(LOGIN, {"username": username, "password": password}, REMOTE_ADDR=ip, **headers)


def sign_out(client):
    """The sign-out button (the test client's own logout() would also drop every cookie, which a browser does not)."""
    client.post("/accounts/logout/")
    assert not signed_in(client)


def signed_in(client):
    return "_auth_user_id" in client.session


@pytest.fixture
def staff(django_user_model, site):
    """Twenty-six accounts (a spray list): user_a .. user_z."""
    return [make_user(django_user_model, f"user_{chr(97 + n)}", "crew", [site]) for n in range(26)]


def test_one_password_sprayed_over_26_usernames_from_one_address_is_stopped(staff):
    sprayer = Client()
    answers = [sign_in(sprayer, user.username, SPRAYED, ip="203.0.113.7") for user in staff]
    refused = [a for a in answers if "Too many failed sign-ins from this network address" in a.content.decode()]
    assert len(refused) == 26 - 9  # the 10th failure starts the pause; the 11th account onwards is not even tried
    assert SignInFailure.objects.filter(ip_address="203.0.113.7").count() == 10  # refused tries are not counted
    # Even the right password of a 27th account is refused from that address while the pause lasts ...
    assert not signed_in(sprayer)
    late = Client()
    assert "Too many failed sign-ins from this network address" in sign_in(late, "user_a", PASSWORD, ip="203.0.113.7").content.decode()
    assert not signed_in(late)
    # ... but from any other address everyone signs in.
    elsewhere = Client()
    assert sign_in(elsewhere, "user_z", PASSWORD, ip="198.51.100.20").status_code == 302
    assert signed_in(elsewhere)


def test_a_strangers_failures_from_one_address_do_not_keep_the_real_user_out_elsewhere(crew):
    stranger = Client()
    for _ in range(12):
        sign_in(stranger, "crew1", "guess", ip="203.0.113.7")
    assert "Too many failed sign-ins for this username from this device" in sign_in(
        stranger, "crew1", PASSWORD, ip="203.0.113.7").content.decode()
    assert not signed_in(stranger)
    real_user = Client()
    response = sign_in(real_user, "crew1", PASSWORD, ip="198.51.100.20")
    assert response.status_code == 302
    assert real_user.session["_auth_user_id"] == str(crew.pk)


def test_guessing_one_username_from_many_addresses_is_stopped(crew):
    attacker = Client()
    for n in range(10):
        sign_in(attacker, "crew1", f"guess-{n}", ip=f"203.0.113.{n + 1}")  # a new address for every guess
    answer = sign_in(attacker, "crew1", PASSWORD, ip="203.0.113.99").content.decode()  # even the right one
    assert "Too many failed sign-ins for this username from several places" in answer
    assert not signed_in(attacker)
    assert SignInFailure.objects.filter(username="crew1").count() == 10


def test_the_real_users_own_tablet_still_signs_in_while_their_username_is_under_attack(crew):
    tablet = Client()
    assert sign_in(tablet, "crew1", PASSWORD, ip="10.0.0.5").status_code == 302  # the tablet is now known
    assert throttle.DEVICE_COOKIE in tablet.cookies
    sign_out(tablet)
    attacker = Client()
    for n in range(15):
        sign_in(attacker, "crew1", f"guess-{n}", ip=f"203.0.113.{n + 1}")
    for n in range(12):
        sign_in(attacker, "someone_else", "guess", ip="10.0.0.5")  # and the shared warehouse address, too
    assert sign_in(tablet, "crew1", PASSWORD, ip="10.0.0.5").status_code == 302
    assert signed_in(tablet)
    # A browser that never signed in as crew1 waits, at the warehouse address or anywhere else.
    assert sign_in(Client(), "crew1", PASSWORD, ip="10.0.0.5").status_code == 200
    assert sign_in(Client(), "crew1", PASSWORD, ip="198.51.100.20").status_code == 200


def test_a_known_device_is_still_paused_after_its_own_five_failures(crew):
    tablet = Client()
    sign_in(tablet, "crew1", PASSWORD)
    sign_out(tablet)
    for _ in range(5):
        sign_in(tablet, "crew1", "wrong", ip="10.0.0.5")
    answer = sign_in(tablet, "crew1", PASSWORD, ip="10.0.0.5").content.decode()
    assert "Too many failed sign-ins for this username on this device" in answer
    assert not signed_in(tablet)


def test_a_forged_device_cookie_is_worth_nothing(crew):
    for n in range(10):
        sign_in(Client(), "crew1", f"guess-{n}", ip=f"203.0.113.{n + 1}")
    forger = Client()
    forger.cookies[throttle.DEVICE_COOKIE] = "eyJkIjoiYWJjIiwidSI6W119:forged:signature"
    assert sign_in(forger, "crew1", PASSWORD, ip="198.51.100.20").status_code == 200
    assert not signed_in(forger)


def test_a_device_known_for_one_user_is_not_known_for_another(crew, supervisor):
    tablet = Client()
    sign_in(tablet, "crew1", PASSWORD)
    sign_out(tablet)
    for n in range(10):
        sign_in(Client(), "super1", f"guess-{n}", ip=f"203.0.113.{n + 1}")
    assert sign_in(tablet, "super1", PASSWORD).status_code == 200
    assert sign_in(tablet, "crew1", PASSWORD).status_code == 302


def test_the_forwarded_address_is_ignored_without_a_trusted_proxy(crew):
    """Without FLEETCARE_TRUSTED_PROXIES, a client writing a new X-Forwarded-For each time is still one address."""
    sprayer = Client()
    for n in range(10):
        sign_in(sprayer, f"nobody{n}", SPRAYED, ip="203.0.113.7", HTTP_X_FORWARDED_FOR=f"192.0.2.{n + 1}")
    assert set(SignInFailure.objects.values_list("ip_address", flat=True)) == {"203.0.113.7"}
    assert "from this network address" in sign_in(
        sprayer, "nobody99", SPRAYED, ip="203.0.113.7", HTTP_X_FORWARDED_FOR="192.0.2.200").content.decode()


def test_behind_a_trusted_proxy_the_address_it_recorded_is_the_clients(settings, crew):
    """One proxy of ours: its entry (the header's last) is the client; what the client wrote before it is not."""
    settings.FLEETCARE_TRUSTED_PROXIES = 1
    proxy = "172.18.0.2"
    stranger = Client()
    for n in range(6):
        sign_in(stranger, "crew1", "guess", ip=proxy, HTTP_X_FORWARDED_FOR=f"10.9.9.{n}, 203.0.113.7")
    assert set(SignInFailure.objects.values_list("ip_address", flat=True)) == {"203.0.113.7"}
    assert "from this device" in sign_in(
        stranger, "crew1", PASSWORD, ip=proxy, HTTP_X_FORWARDED_FOR="203.0.113.7").content.decode()
    # Everyone reaches the app through the proxy's address, yet the real user at another address is let in.
    real_user = Client()
    assert sign_in(real_user, "crew1", PASSWORD, ip=proxy, HTTP_X_FORWARDED_FOR="198.51.100.20").status_code == 302


def test_behind_a_trusted_proxy_spraying_is_counted_per_client_not_per_proxy(settings, staff):
    settings.FLEETCARE_TRUSTED_PROXIES = 1
    proxy = "172.18.0.2"
    for user in staff[:12]:
        sign_in(Client(), user.username, SPRAYED, ip=proxy, HTTP_X_FORWARDED_FOR="203.0.113.7")
    assert SignInFailure.objects.filter(ip_address="203.0.113.7").count() == 10
    assert sign_in(Client(), "user_z", PASSWORD, ip=proxy, HTTP_X_FORWARDED_FOR="198.51.100.20").status_code == 302


@pytest.mark.parametrize(("hops", "remote", "forwarded", "expected"), [
    (0, "10.0.0.5", "1.2.3.4", "10.0.0.5"),
    (1, "172.18.0.2", "1.2.3.4", "1.2.3.4"),
    (1, "172.18.0.2", "6.6.6.6, 1.2.3.4", "1.2.3.4"),
    (2, "172.18.0.3", "6.6.6.6, 1.2.3.4, 172.18.0.2", "1.2.3.4"),
    (1, "172.18.0.2", "", "172.18.0.2"),  # did not come through the proxy: the connection's own address
    (2, "172.18.0.3", "1.2.3.4", "172.18.0.3"),  # fewer entries than proxies: not believed
    (1, "172.18.0.2", "not-an-address", "172.18.0.2"),
    (1, "172.18.0.2", "2001:DB8::1", "2001:db8::1"),
])
def test_the_client_address_follows_the_trusted_proxy_setting(rf, settings, hops, remote, forwarded, expected):
    settings.FLEETCARE_TRUSTED_PROXIES = hops
    request = rf.get("/", REMOTE_ADDR=remote, HTTP_X_FORWARDED_FOR=forwarded)
    assert throttle.client_ip(request) == expected


def test_the_admin_sign_in_counts_toward_the_same_pauses(client, crew):
    for n in range(10):
        client.post("/admin/login/", {"username": f"nobody{n}", "password": SPRAYED}, REMOTE_ADDR="203.0.113.7")
    assert SignInFailure.objects.filter(ip_address="203.0.113.7").count() == 10
    assert "from this network address" in sign_in(Client(), "crew1", PASSWORD, ip="203.0.113.7").content.decode()

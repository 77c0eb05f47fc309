"""Sign-in: throttled after repeated failures, sessions that end, password rules, no built-in users."""
import datetime as dt

import pytest
from django.conf import settings
from django.contrib.auth import get_user_model
from django.contrib.auth.password_validation import validate_password
from django.core.exceptions import ValidationError
from django.db.models import F
from django.urls import reverse

from fleetcare.accounts.models import SignInFailure

PASSWORD = "not-a-real-password-1"  # tests/conftest.py make_user
LOGIN = "/accounts/login/"


def sign_in(client, username, password, ip="10.0.0.5"):
    return client.post(LOGIN, {"username": username, "password": password}, REMOTE_ADDR=ip)


def fail(client, username, times, ip="10.0.0.5"):
    for _ in range(times):
        response = sign_in(client, username, "wrong-password", ip=ip)
        assert response.status_code == 200


def test_the_sign_in_page_is_open_to_everyone(client):
    response = client.get(LOGIN)
    assert response.status_code == 200
    assert 'name="password"' in response.content.decode()


def test_four_failures_still_let_the_right_password_in(client, crew):
    fail(client, "crew1", 4)
    response = sign_in(client, "crew1", PASSWORD)
    assert response.status_code == 302
    assert client.session["_auth_user_id"] == str(crew.pk)
    assert not SignInFailure.objects.exists()  # a success forgets the failures


def test_five_failures_pause_sign_in_even_with_the_right_password(client, crew):
    fail(client, "crew1", 5)
    response = sign_in(client, "crew1", PASSWORD)
    html = response.content.decode()
    assert response.status_code == 200
    assert "Too many failed sign-ins for this username from this device" in html
    assert "try again in 15 minutes" in html
    assert "_auth_user_id" not in client.session


def test_attempts_while_paused_do_not_extend_the_pause(client, crew):
    fail(client, "crew1", 5)
    fail(client, "crew1", 3)
    assert SignInFailure.objects.count() == 5


def test_the_pause_lasts_fifteen_minutes_from_the_last_failure(client, crew):
    fail(client, "crew1", 5)
    SignInFailure.objects.update(failed_at=F("failed_at") - dt.timedelta(minutes=14))
    assert "try again in 1 minute " in sign_in(client, "crew1", PASSWORD).content.decode()
    SignInFailure.objects.update(failed_at=F("failed_at") - dt.timedelta(minutes=1, seconds=1))
    assert sign_in(client, "crew1", PASSWORD).status_code == 302


def test_failures_spread_over_more_than_the_window_do_not_lock(client, crew):
    fail(client, "crew1", 5)
    for n, failure in enumerate(SignInFailure.objects.order_by("pk")):
        failure.failed_at -= dt.timedelta(minutes=4 * (5 - n))  # one every 4 minutes: first to last is 16 min
        failure.save()
    assert sign_in(client, "crew1", PASSWORD).status_code == 302


def test_the_pause_is_per_username_and_address(client, crew, supervisor):
    fail(client, "crew1", 5, ip="10.0.0.5")
    assert sign_in(client, "crew1", PASSWORD, ip="10.0.0.9").status_code == 302
    client.logout()
    assert sign_in(client, "super1", PASSWORD, ip="10.0.0.5").status_code == 302


def test_the_count_is_shared_between_separate_sessions(client, django_user_model, crew):
    """Five failures from five browsers (or five web workers) count together: the count lives in the database."""
    from django.test import Client

    for _ in range(5):
        fail(Client(), "crew1", 1)
    assert "Too many failed sign-ins" in sign_in(client, "crew1", PASSWORD).content.decode()


def test_the_admin_sign_in_is_paused_too(client, django_user_model):
    get_user_model().objects.create_superuser("root", password=PASSWORD)
    for _ in range(5):
        client.post("/admin/login/", {"username": "root", "password": "wrong"}, REMOTE_ADDR="10.0.0.5")
    response = client.post("/admin/login/", {"username": "root", "password": PASSWORD}, REMOTE_ADDR="10.0.0.5")
    assert response.status_code == 200
    assert "_auth_user_id" not in client.session


def test_usernames_are_counted_whatever_their_case(client, crew):
    fail(client, "CREW1", 3)
    fail(client, "crew1", 2)
    assert "Too many failed sign-ins" in sign_in(client, "crew1", PASSWORD).content.decode()


def test_a_wrong_password_gets_a_plain_message(client, crew):
    html = sign_in(client, "crew1", "wrong-password").content.decode()
    assert "That username and password do not match. Both are case-sensitive." in html


def test_sessions_end_after_a_twelve_hour_shift_by_default():
    assert settings.SESSION_COOKIE_AGE == 12 * 3600
    assert settings.SESSION_EXPIRE_AT_BROWSER_CLOSE is False
    assert settings.SESSION_COOKIE_HTTPONLY is True


def test_the_session_cookie_carries_the_expiry(client, crew):
    response = sign_in(client, "crew1", PASSWORD)
    assert response.cookies["sessionid"]["max-age"] == 12 * 3600


@pytest.mark.parametrize(("password", "message"), [
    ("short1", "This password is too short. It must contain at least 8 characters."),
    ("password123", "This password is too common."),
    ("8675309123", "This password is entirely numeric."),
])
def test_weak_passwords_are_refused(crew, password, message):
    with pytest.raises(ValidationError) as refused:
        validate_password(password, user=crew)
    assert message in refused.value.messages


def test_a_password_change_uses_the_same_rules(client, crew):
    client.force_login(crew)
    response = client.post(reverse("password_change"), {
        "old_password": PASSWORD, "new_password1": "12345678", "new_password2": "12345678",
    })
    assert response.status_code == 200
    assert "This password is too common." in response.content.decode()


def test_no_migration_creates_a_user(db):
    """Demo users exist only when `manage.py demo` makes them; a fresh database has nobody."""
    assert get_user_model().objects.count() == 0

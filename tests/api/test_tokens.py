"""Personal API tokens: made on a page or by command, shown once, revocable, only your own."""
from io import StringIO

import pytest
from django.core.management import CommandError, call_command
from django.test import Client

from fleetcare.api.models import ApiToken


def test_the_page_shows_a_new_token_once(crew_client, crew):
    response = crew_client.post("/api/tokens/", {"name": "workshop sheet"})
    secret = response.context["new_secret"]
    assert secret.startswith("fc_") and secret in response.content.decode()
    assert Client(HTTP_AUTHORIZATION=f"Bearer {secret}").get("/api/sites").status_code == 200
    again = crew_client.get("/api/tokens/")
    assert secret not in again.content.decode()
    assert "workshop sheet" in again.content.decode()


def test_the_page_revokes_a_token(crew_client, crew):
    crew_client.post("/api/tokens/", {"name": "old laptop"})
    token = ApiToken.objects.get(user=crew)
    response = crew_client.post("/api/tokens/", {"revoke": token.pk})
    assert response.status_code == 302
    token.refresh_from_db()
    assert token.revoked_at is not None


def test_nobody_revokes_someone_elses_token(crew_client, supervisor):
    from fleetcare.api.tokens import create_token

    token, _ = create_token(supervisor, "supervisor's")
    assert crew_client.post("/api/tokens/", {"revoke": token.pk}).status_code == 404
    token.refresh_from_db()
    assert token.revoked_at is None


def test_the_page_needs_a_sign_in(client):
    response = client.get("/api/tokens/")
    assert response.status_code == 302 and "/accounts/login/" in response["Location"]


def test_the_command_creates_lists_and_revokes(crew):
    out = StringIO()
    call_command("api_token", "create", "crew1", "--name", "nightly export", stdout=out)
    secret = out.getvalue().strip().splitlines()[-1]
    assert Client(HTTP_AUTHORIZATION=f"Bearer {secret}").get("/api/sites").status_code == 200

    listing = StringIO()
    call_command("api_token", "list", "crew1", stdout=listing)
    assert f"{secret[:10]}…  nightly export" in listing.getvalue() and "live" in listing.getvalue()

    call_command("api_token", "revoke", "crew1", "--prefix", secret[:10], stdout=StringIO())
    assert Client(HTTP_AUTHORIZATION=f"Bearer {secret}").get("/api/sites").status_code == 401


def test_the_command_refuses_to_guess_which_token_to_revoke(crew):
    call_command("api_token", "create", "crew1", stdout=StringIO())
    with pytest.raises(CommandError, match="Say which token"):
        call_command("api_token", "revoke", "crew1")
    with pytest.raises(CommandError, match="No user"):
        call_command("api_token", "list", "nobody-of-that-name")


def test_changing_the_password_revokes_every_token(crew_client, crew, supervisor):
    from fleetcare.api.tokens import create_token

    _, secret = create_token(crew, "workshop sheet")
    _, other_secret = create_token(supervisor, "supervisor's")
    assert Client(HTTP_AUTHORIZATION=f"Bearer {secret}").get("/api/sites").status_code == 200
    response = crew_client.post("/accounts/password_change/", {
        "old_password": "not-a-real-password-1", "new_password1": "a-new-passphrase-2026", "new_password2": "a-new-passphrase-2026",
    })
    assert response.status_code == 302
    assert Client(HTTP_AUTHORIZATION=f"Bearer {secret}").get("/api/sites").status_code == 401
    assert not ApiToken.objects.live().filter(user=crew).exists()
    assert Client(HTTP_AUTHORIZATION=f"Bearer {other_secret}").get("/api/sites").status_code == 200


def test_a_password_set_in_code_revokes_the_tokens_too_and_other_saves_do_not(crew):
    from fleetcare.api.tokens import create_token

    create_token(crew, "laptop")
    crew.last_login = None
    crew.save()  # saving without a new password keeps them
    assert ApiToken.objects.live().filter(user=crew).count() == 1
    crew.set_password("another-passphrase-2026")
    crew.save()
    assert ApiToken.objects.live().filter(user=crew).count() == 0

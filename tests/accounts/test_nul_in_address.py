"""A NUL character in an address or query gets a 400 with a message (PostgreSQL cannot compare text holding one:
these addresses answered 500 there)."""
import pytest

ADDRESSES = ["/labels/b/tw/a%00b/", "/planner/feed/a%00b.ics", "/settings/a%00b/", "/readings/find/?q=a%00b",
             "/batteries/?q=a%00b", "/batteries/?site=a%00b", "/labels/?site=a%00b", "/labels/?a%00b=1"]


@pytest.mark.parametrize("address", ADDRESSES)
def test_a_nul_in_the_address_gets_a_400_with_a_message(client, django_user_model, site, address):
    from fleetcare.accounts.roles import ADMINISTRATOR
    from tests.conftest import make_user

    client.force_login(make_user(django_user_model, "admin2", ADMINISTRATOR, [site]))
    response = client.get(address)
    assert response.status_code == 400
    assert "a NUL" in response.content.decode()
    assert response["Cache-Control"] == "private, no-store"


def test_the_api_answers_a_nul_in_its_query_with_json(crew_client, battery):
    response = crew_client.get("/api/batteries", {"site": "a\x00b"})
    assert response.status_code == 400
    assert "a NUL" in response.json()["detail"]


def test_an_address_without_nul_is_untouched(crew_client, battery):
    assert crew_client.get("/batteries/", {"q": "TW-001"}).status_code == 200

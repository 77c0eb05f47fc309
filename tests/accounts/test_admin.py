"""Administrators manage people and their sites; the audit trail cannot be edited, even by them."""
import pytest
from django.contrib.auth import get_user_model
from django.urls import reverse

from fleetcare.readings.models import ReadingChange
from fleetcare.readings import services

from .conftest import store_inspection


@pytest.fixture
def root_client(client, db):
    client.force_login(get_user_model().objects.create_superuser("root", password="not-a-real-password-1"))
    return client


def test_a_persons_page_lists_the_sites_they_work_at(root_client, crew):
    html = root_client.get(reverse("admin:auth_user_change", args=[crew.pk])).content.decode()
    assert "sites this person works at" in html.lower()


def test_the_audit_trail_is_readable_but_not_editable(root_client, battery, crew, supervisor):
    services.remove_inspection(store_inspection(battery, crew), user=supervisor, reason="entered twice")
    change = ReadingChange.objects.get()
    assert root_client.get(reverse("admin:readings_readingchange_changelist")).status_code == 200
    root_client.post(reverse("admin:readings_readingchange_delete", args=[change.pk]), {"post": "yes"})
    assert root_client.get(reverse("admin:readings_readingchange_add")).status_code == 403
    assert ReadingChange.objects.get().reason == "entered twice"


def test_the_password_change_page_is_ours(client, crew):
    client.force_login(crew)
    response = client.get(reverse("password_change"))
    assert response.status_code == 200
    assert "Change your password" in response.content.decode()


def test_administrators_may_manage_people_and_other_roles_get_no_admin_rights(administrator, manager):
    administrator.is_staff = True
    administrator.save()
    assert administrator.has_perm("auth.change_user")
    assert administrator.has_perm("fleet.add_battery")
    assert not manager.has_perm("fleet.add_battery")
    assert not manager.has_perm("auth.change_user")

"""The API's URLs. django-ninja makes one view per path; each is marked with the least role it needs
(the crew role, enforced by the API's auth classes), and the OpenAPI document is public."""
from django.urls import path

from fleetcare.api import views
from fleetcare.api.api import LEAST_ROLE, api

app_name = "api"


def _marked(patterns):
    kept = []
    for pattern in patterns:
        if pattern.name == "api-root":
            continue
        pattern.callback.least_role = None if pattern.name == "openapi-json" else LEAST_ROLE
        kept.append(pattern)
    return kept


urlpatterns = [
    path("", views.docs, name="api-root"),
    path("tokens/", views.tokens, name="tokens"),
    *_marked(api.urls[0]),
]

"""Pages around the API: its documentation and personal tokens."""
from django.contrib import messages
from django.shortcuts import get_object_or_404, redirect, render
from django.views.decorators.http import require_http_methods

from fleetcare.accounts.access import public_view, role_required
from fleetcare.accounts.roles import CREW
from fleetcare.api.api import api
from fleetcare.api.models import ApiToken
from fleetcare.api.tokens import create_token, revoke_token

METHOD_ORDER = {"get": 0, "post": 1, "put": 2, "patch": 3, "delete": 4}


def operations(schema):
    """The OpenAPI document's operations as rows for the documentation page."""
    rows = []
    for path, methods in schema["paths"].items():
        for method, op in sorted(methods.items(), key=lambda item: METHOD_ORDER.get(item[0], 9)):
            body = op.get("requestBody", {}).get("content", {}).get("application/json", {}).get("schema", {})
            rows.append({
                "method": method.upper(), "path": path, "summary": op.get("summary", ""),
                "description": op.get("description", ""),
                "parameters": [(p["name"], p["in"], p.get("required", False)) for p in op.get("parameters", [])],
                "body": body.get("$ref", "").rsplit("/", 1)[-1],
                "statuses": sorted(op.get("responses", {})),
            })
    return rows


@public_view
def docs(request):
    schema = api.get_openapi_schema()
    components = schema.get("components", {}).get("schemas", {})
    return render(request, "api/docs.html", {
        "info": schema["info"], "operations": operations(schema),
        "schemas": sorted((name, body.get("properties", {}), set(body.get("required", [])))
                          for name, body in components.items()),
    })


@role_required(CREW)
@require_http_methods(["GET", "POST"])
def tokens(request):
    """Your own API tokens: make one (its secret is shown once) or revoke one."""
    new_secret = None
    if request.method == "POST":
        if "revoke" in request.POST:
            token = get_object_or_404(ApiToken, pk=request.POST["revoke"], user=request.user)
            revoke_token(token)
            messages.success(request, f"Token “{token.name}” revoked: programs using it are refused from now on.")
            return redirect("api:tokens")
        name = request.POST.get("name", "").strip()[:80]
        if not name:
            messages.error(request, "Give the token a name: what will use it?")
        else:
            _, new_secret = create_token(request.user, name)
    return render(request, "api/tokens.html", {
        "tokens": ApiToken.objects.filter(user=request.user), "new_secret": new_secret,
    })

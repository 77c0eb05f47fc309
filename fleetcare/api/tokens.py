"""Making, checking and revoking API tokens. A token is "fc_" and 43 random URL-safe characters."""
import hashlib
import secrets

from django.db import transaction
from django.utils import timezone

from fleetcare.api.models import ApiToken

TOKEN_PREFIX = "fc_"
SHOWN_PREFIX_LENGTH = 10
LAST_USED_RESOLUTION_S = 60


def digest_of(secret):
    return hashlib.sha256(secret.encode("utf-8")).hexdigest()


@transaction.atomic
def create_token(user, name):
    """Store a new token for user and return (token row, the secret). The secret is not kept anywhere."""
    secret = TOKEN_PREFIX + secrets.token_urlsafe(32)
    token = ApiToken.objects.create(
        user=user, name=name.strip() or "unnamed", prefix=secret[:SHOWN_PREFIX_LENGTH], digest=digest_of(secret)
    )
    return token, secret


def user_for_secret(secret):
    """The active user a live token belongs to, or None."""
    if not secret or not secret.startswith(TOKEN_PREFIX) or len(secret) > 200:
        return None
    token = ApiToken.objects.live().select_related("user").filter(digest=digest_of(secret)).first()
    if token is None or not token.user.is_active:
        return None
    now = timezone.now()
    if token.last_used_at is None or (now - token.last_used_at).total_seconds() > LAST_USED_RESOLUTION_S:
        ApiToken.objects.filter(pk=token.pk).update(last_used_at=now)
    return token.user


def revoke_token(token):
    """Revoke once; revoking again keeps the first time."""
    if token.revoked_at is None:
        token.revoked_at = timezone.now()
        ApiToken.objects.filter(pk=token.pk, revoked_at__isnull=True).update(revoked_at=token.revoked_at)
    return token


def revoke_all_tokens(user):
    """Revoke every live token of a user (their password changed: whoever knew the old one may hold a token)."""
    return ApiToken.objects.live().filter(user=user).update(revoked_at=timezone.now())

"""api_token create|revoke|list USER: personal API tokens from the command line."""
from django.contrib.auth import get_user_model
from django.core.management.base import BaseCommand, CommandError

from fleetcare import words
from fleetcare.api.models import ApiToken
from fleetcare.api.tokens import create_token, revoke_token


class Command(BaseCommand):
    help = "Create, revoke or list a user's API tokens. A new token is printed once and never stored."

    def add_arguments(self, parser):
        parser.add_argument("action", choices=["create", "revoke", "list"])
        parser.add_argument("username")
        parser.add_argument("--name", default="command line", help="What will use the token (create).")
        parser.add_argument("--prefix", help="The token's first characters, as `list` shows them (revoke).")
        parser.add_argument("--all", action="store_true", help="Revoke every live token of the user.")

    def handle(self, *args, action, username, name, prefix, all, **options):
        try:
            user = get_user_model().objects.get(username=username)
        except get_user_model().DoesNotExist as exc:
            raise CommandError(f"No user {username!r}.") from exc
        if action == "create":
            token, secret = create_token(user, name)
            self.stdout.write(f"Token “{token.name}” for {user.username} (shown once, keep it safe):")
            self.stdout.write(secret)
        elif action == "list":
            for token in ApiToken.objects.filter(user=user):
                state = f"revoked {token.revoked_at:%Y-%m-%d %H:%M}" if token.revoked_at else "live"
                used = f"{token.last_used_at:%Y-%m-%d %H:%M}" if token.last_used_at else "never"
                self.stdout.write(f"{token.prefix}…  {token.name}  created {token.created_at:%Y-%m-%d}  "
                                  f"last used {used}  {state}")
        else:
            live = ApiToken.objects.live().filter(user=user)
            if not all:
                if not prefix:
                    raise CommandError("Say which token: --prefix fc_XXXXXXX (see `list`), or --all.")
                live = live.filter(prefix=prefix)
            tokens = list(live)
            if not tokens:
                raise CommandError("No live token matches.")
            for token in tokens:
                revoke_token(token)
            self.stdout.write(f"Revoked {words.count(len(tokens), 'token')} of {user.username}.")

"""A changed password revokes the user's API tokens, whichever way it changed (page, admin, command, reset)."""
from django.contrib.auth import get_user_model
from django.db.models.signals import pre_save
from django.dispatch import receiver

from fleetcare.api.tokens import revoke_all_tokens


@receiver(pre_save, sender=get_user_model())
def _revoke_tokens_when_the_password_changes(sender, instance, raw=False, update_fields=None, **kwargs):
    if raw or instance.pk is None or (update_fields is not None and "password" not in update_fields):
        return
    stored = sender.objects.filter(pk=instance.pk).values_list("password", flat=True).first()
    if stored is not None and stored != instance.password:
        revoke_all_tokens(instance)

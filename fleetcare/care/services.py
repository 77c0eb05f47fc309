"""Writes on findings: a supervisor acknowledging one."""
from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from fleetcare.care.models import Finding


def acknowledge(finding, user, comment):
    """Mark an open finding as seen, with the supervisor's comment. It still clears itself later."""
    comment = (comment or "").strip()
    if not comment:
        raise ValidationError({"comment": "Say what will be done (or why nothing will)."})
    with transaction.atomic():
        finding = Finding.objects.select_for_update().get(pk=finding.pk)
        if finding.state == Finding.State.CLEARED:
            raise ValidationError("This finding has cleared itself; there is nothing to acknowledge.")
        finding.state = Finding.State.ACKNOWLEDGED
        finding.acknowledged_by = user
        finding.acknowledged_at = timezone.now()
        finding.acknowledged_comment = comment
        finding.save(update_fields=["state", "acknowledged_by", "acknowledged_at", "acknowledged_comment"])
    return finding

"""Sent once a record is committed; findings detection listens."""
from django.dispatch import Signal

inspection_recorded = Signal()  # kwargs: inspection
top_up_recorded = Signal()  # kwargs: top_up
inspections_imported = Signal()  # kwargs: battery_ids (one batch per import, sent once on commit)

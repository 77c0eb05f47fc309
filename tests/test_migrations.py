"""The models and their migrations agree: a model change without its migration fails here, not on a server."""
import io

import pytest
from django.core.management import call_command


@pytest.mark.django_db
def test_every_model_change_has_its_migration():
    out = io.StringIO()
    try:
        call_command("makemigrations", "--check", "--dry-run", stdout=out, stderr=out)
    except SystemExit as exit_:
        pytest.fail(f"a model change has no migration (exit {exit_.code}):\n{out.getvalue()}")

"""Every findings pass rewrites the last-seen time of every active finding: on PostgreSQL the table leaves room on
each page and no index holds that column, so the rewrite touches no index (migration care 0012)."""
import pytest
from django.db import connection

from fleetcare.care.models import Finding

pytestmark = pytest.mark.skipif(connection.vendor != "postgresql", reason="page room and HOT updates are PostgreSQL's")


@pytest.mark.django_db
def test_the_findings_table_leaves_room_on_each_page_and_no_index_holds_last_seen():
    with connection.cursor() as cursor:
        cursor.execute("SELECT reloptions FROM pg_class WHERE relname = %s", [Finding._meta.db_table])
        assert "fillfactor=70" in (cursor.fetchone()[0] or [])
        cursor.execute("SELECT indexdef FROM pg_indexes WHERE tablename = %s", [Finding._meta.db_table])
        definitions = [row[0] for row in cursor.fetchall()]
    assert definitions
    assert not [d for d in definitions if "last_seen_at" in d]

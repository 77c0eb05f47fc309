from django.db import migrations

# Every findings pass rewrites the last-seen time of every active finding (25,000 rows at 10,000 batteries).
# With its pages full, each new row version went to another page and into all eight indexes of the table;
# with 30 % of each page left free, PostgreSQL writes it beside the old one and touches no index (a "HOT"
# update, possible because no index holds last_seen_at). Measured with psql on a 10,000-battery benchmark fleet:
# the update took 0.6-1.1 s before, 0.16-0.28 s after (docs/benchmarks.md). Existing pages take the setting as
# they are rewritten.
FILLFACTOR = 70


def room_for_updates(apps, schema_editor):
    if schema_editor.connection.vendor == "postgresql":
        schema_editor.execute(f"ALTER TABLE care_finding SET (fillfactor = {FILLFACTOR})")


def full_pages(apps, schema_editor):
    if schema_editor.connection.vendor == "postgresql":
        schema_editor.execute("ALTER TABLE care_finding RESET (fillfactor)")


class Migration(migrations.Migration):

    dependencies = [
        ("care", "0011_finding_opened_and_cleared_indexes"),
    ]

    operations = [migrations.RunPython(room_for_updates, full_pages)]

"""ReadingChange moves to the readings app (readings 0004 takes over its table); only the state changes here."""
from django.db import migrations


class Migration(migrations.Migration):

    dependencies = [
        ('accounts', '0001_initial'),
    ]

    operations = [
        migrations.SeparateDatabaseAndState(
            state_operations=[migrations.DeleteModel(name='ReadingChange')],
            database_operations=[],
        ),
    ]

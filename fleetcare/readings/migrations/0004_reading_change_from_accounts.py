"""ReadingChange moves here from the accounts app: the table and its rows are kept and renamed
(accounts_readingchange -> readings_readingchange), and its content type (with its permissions and
admin log entries) follows it."""
import django.db.models.deletion
from django.conf import settings
from django.db import migrations, models


def content_type_to(app_label, other):
    def move(apps, schema_editor):
        ContentType = apps.get_model('contenttypes', 'ContentType')
        if not ContentType.objects.filter(app_label=app_label, model='readingchange').exists():
            ContentType.objects.filter(app_label=other, model='readingchange').update(app_label=app_label)
    return move


class Migration(migrations.Migration):

    dependencies = [
        ('accounts', '0002_reading_change_moves_to_readings'),
        ('contenttypes', '0002_remove_content_type_name'),
        ('fleet', '0001_initial'),
        ('readings', '0003_overview_indexes'),
        migrations.swappable_dependency(settings.AUTH_USER_MODEL),
    ]

    operations = [
        migrations.SeparateDatabaseAndState(
            state_operations=[
                migrations.CreateModel(
                    name='ReadingChange',
                    fields=[
                        ('id', models.BigAutoField(auto_created=True, primary_key=True, serialize=False, verbose_name='ID')),
                        ('action', models.CharField(choices=[('corrected', 'Corrected'), ('removed', 'Removed')], max_length=10)),
                        ('changed_at', models.DateTimeField(auto_now_add=True)),
                        ('reason', models.CharField(max_length=200)),
                        ('battery', models.ForeignKey(on_delete=django.db.models.deletion.PROTECT, related_name='reading_changes', to='fleet.battery')),
                        ('changed_by', models.ForeignKey(on_delete=django.db.models.deletion.PROTECT, related_name='reading_changes', to=settings.AUTH_USER_MODEL)),
                        ('inspection', models.ForeignKey(blank=True, help_text='The inspection revision that was corrected or removed.', null=True, on_delete=django.db.models.deletion.PROTECT, related_name='changes', to='readings.inspection')),
                        ('new_revision', models.OneToOneField(blank=True, help_text='The revision a correction stored.', null=True, on_delete=django.db.models.deletion.PROTECT, related_name='made_by_change', to='readings.inspection')),
                        ('top_up', models.ForeignKey(blank=True, null=True, on_delete=django.db.models.deletion.PROTECT, related_name='changes', to='readings.watertopup')),
                    ],
                    options={
                        'db_table': 'accounts_readingchange',
                        'ordering': ['-changed_at', '-pk'],
                        'indexes': [models.Index(fields=['battery', '-changed_at'], name='reading_change_battery_time')],
                        'constraints': [models.CheckConstraint(condition=models.Q(models.Q(('inspection__isnull', False), ('top_up__isnull', True)), models.Q(('inspection__isnull', True), ('top_up__isnull', False)), _connector='OR'), name='reading_change_names_one_record')],
                    },
                ),
            ],
            database_operations=[],
        ),
        migrations.AlterModelTable(name='readingchange', table=None),
        migrations.RunPython(content_type_to('readings', 'accounts'), content_type_to('accounts', 'readings')),
    ]

# Written by hand: API tokens moved to django-rest-knox, which keeps only a digest.
# The old table of DRF's authtoken app held every token in clear text; drop it (those tokens
# stop working: each person obtains a new one from /api/v1/token/).

from django.db import migrations


def drop_plain_tokens(apps, schema_editor):
    tables = schema_editor.connection.introspection.table_names()
    if "authtoken_token" in tables:
        schema_editor.execute("DROP TABLE authtoken_token")
    if "django_migrations" in tables:
        schema_editor.execute("DELETE FROM django_migrations WHERE app = 'authtoken'")


class Migration(migrations.Migration):

    dependencies = [
        ("inventory", "0004_history_reason_text"),
        ("knox", "0009_extend_authtoken_field"),
    ]

    operations = [migrations.RunPython(drop_plain_tokens, migrations.RunPython.noop)]

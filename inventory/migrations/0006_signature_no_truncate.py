# Written by hand: block TRUNCATE of the signature table on PostgreSQL, as UPDATE and DELETE
# are (migration 0003).  TRUNCATE skips row triggers, so a statement trigger refuses it.
# The test settings set sersledger.allow_signature_truncate=on on their connections because
# the test runner empties tables with TRUNCATE; production connections never set it, so even
# `manage.py flush` is refused there.  SQLite has no TRUNCATE; nothing is added there.

from django.db import migrations

CREATE = [
    "CREATE FUNCTION inventory_signature_no_truncate() RETURNS trigger AS $$ "
    "BEGIN "
    "IF current_setting('sersledger.allow_signature_truncate', true) = 'on' THEN RETURN NULL; "
    "END IF; "
    "RAISE EXCEPTION 'signatures are immutable: the signature table cannot be truncated'; "
    "END; $$ LANGUAGE plpgsql;",
    "CREATE TRIGGER inventory_signature_no_truncate BEFORE TRUNCATE ON inventory_signature "
    "FOR EACH STATEMENT EXECUTE FUNCTION inventory_signature_no_truncate();",
]
DROP = [
    "DROP TRIGGER IF EXISTS inventory_signature_no_truncate ON inventory_signature;",
    "DROP FUNCTION IF EXISTS inventory_signature_no_truncate();",
]


def _run(statements):
    def run(apps, schema_editor):
        if schema_editor.connection.vendor == "postgresql":
            for statement in statements:
                schema_editor.execute(statement)
    return run


class Migration(migrations.Migration):

    dependencies = [("inventory", "0005_drop_plain_api_tokens")]

    operations = [migrations.RunPython(_run(CREATE), _run(DROP))]

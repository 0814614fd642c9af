"""System checks of the lab's settings: substrate stages that no QC limits cover.

Tagged ``database`` so it runs where the database is at hand (``manage.py check --database
default``, ``migrate``), not on every ``runserver`` reload.
"""

from __future__ import annotations

from django.core.checks import Tags, Warning, register
from django.db import DatabaseError


@register(Tags.database)
def stages_without_limits(app_configs=None, databases=None, **kwargs) -> list[Warning]:
    if not databases:
        return []
    from .selectors.limits import qc_stages_without_limits

    try:
        missing = qc_stages_without_limits()
    except DatabaseError:  # tables not migrated yet
        return []
    if not missing:
        return []
    return [Warning(
        f"No QC limits for: {', '.join(missing)}. Substrates at these stages cannot be QC "
        "tested and readiness does not ask for QC.",
        hint="Define a reference analyte (it gets default limits for every stage, to review) "
             "or set limits on the Limits page (/limits/).",
        id="qc.W001")]

"""The write steps a service of an app above inventory builds on, under public names.

A qc service that records a measurement saves it, stamps its history, links it into the
lineage and checks its upload exactly as an inventory service does; these are the same
functions (their homes stay ``_common``, ``lifecycle`` and ``uploads``), named here as the
part of the inventory's write machinery that other apps may use, so no app imports
another's private names (checked by tests/test_private_imports.py).
"""

from ._common import User
from ._common import _check_substrates_usable as check_substrates_usable
from ._common import _check_values as check_values
from ._common import _link as link
from ._common import _require_kind as require_kind
from ._common import _require_not_future as require_not_future
from ._common import _require_role as require_role_once
from ._common import _save_changed as save_changed
from ._common import _save_new as save_new
from ._common import _save_setting as save_setting
from ._common import _stamp_history as stamp_history
from ._common import _validate as validate
from ._constraints import validate_constraints
from .lifecycle import _transition as transition
from .lifecycle import lock
from .uploads import RawUpload, check_upload, files_removed_if_failed, stored_file_on_disk

__all__ = [
    "RawUpload",
    "User",
    "check_substrates_usable",
    "check_upload",
    "check_values",
    "files_removed_if_failed",
    "link",
    "lock",
    "require_kind",
    "require_not_future",
    "require_role_once",
    "save_changed",
    "save_new",
    "save_setting",
    "stamp_history",
    "stored_file_on_disk",
    "transition",
    "validate",
    "validate_constraints",
]

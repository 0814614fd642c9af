"""Pages of the inventory, split by task; views parse, call one selector or service, render."""

from .overview import home, stock  # noqa: F401
from .records import label_sheet, readiness_check, record_detail, record_label  # noqa: F401
from .trace import trace, trace_graph, trace_prov, trace_report  # noqa: F401

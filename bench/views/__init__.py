"""The pages by task (overview, records, trace, review): parse, call one service, render."""

from .account import api_tokens  # noqa: F401
from .imports import qc_import_page  # noqa: F401
from .limits import limit_edit_colloid, limit_edit_qc, limit_edit_shelf_life, limits  # noqa: F401
from .overview import home, stock  # noqa: F401
from .records import label_sheet, readiness_check, record_detail, record_label  # noqa: F401
from .review import (  # noqa: F401
    flag_resolve,
    plot_chronoamperogram,
    plot_control_chart,
    plot_heatmap,
    plot_raman,
    plot_uvvis,
    review,
    review_sign,
)
from .trace import trace, trace_graph, trace_prov, trace_report, trace_report_pdf  # noqa: F401

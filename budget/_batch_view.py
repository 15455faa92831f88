"""The view-model of the many-batches report (numbers become strings here, not in
templates)."""

from __future__ import annotations

import math
from typing import Any

from .batch import Batch
from ._formatting import format_pair
from ._svg import points_with_bars

__all__ = ["batch_view"]

_LABELS = 12  # at most about this many labels under the chart's points


def batch_view(batch: Batch, digits: int = 2) -> dict[str, Any]:
    certified = [e for e in batch.certified if e.certified_value is not None]
    step = max(1, math.ceil(len(certified) / _LABELS))
    points = [((e.date or str(n + 1)) if n % step == 0 else "", float(e.certified_value or 0.0),
               float(e.expanded_uncertainty or 0.0)) for n, e in enumerate(certified)]
    unit = certified[0].unit if certified else ""
    same_unit = all(e.unit == unit for e in certified)
    centre = math.fsum(p[1] for p in points) / len(points) if points else None
    chart = points_with_bars(points, centre=centre, unit=unit,
                             label="certified values with U, in date order") \
        if points and same_unit else None
    failed = len(batch.entries) - len(batch.certified)
    return {"title": f"Certified values under {batch.folder}",
            "summary": f"{len(batch.entries)} campaign(s): {len(certified)} certified, "
                       f"{failed} failed.",
            "chart": chart, "rows": [_row(e, digits) for e in batch.entries]}


def _row(entry: Any, digits: int) -> dict[str, str]:
    if entry.error is not None or entry.certified_value is None:
        return {"date": entry.date or "", "campaign": entry.path, "value": "", "U": "",
                "k": "", "unit": "", "status": f"failed: {entry.error}"}
    value, width = format_pair(entry.certified_value, entry.expanded_uncertainty or 0.0,
                               digits)
    status = f"{len(entry.warnings)} warning(s)" if entry.warnings else "certified"
    return {"date": entry.date or "", "campaign": entry.path, "value": value, "U": width,
            "k": f"{entry.coverage_factor:.2g}", "unit": entry.unit, "status": status}

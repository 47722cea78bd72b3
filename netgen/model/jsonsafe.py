"""Values made fit for strict JSON, which has no NaN or infinity: those become null."""
from __future__ import annotations

import math


def jsonable(value):
    """`value` with every non-finite float, at any depth of dicts, lists and tuples, as None."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {k: jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [jsonable(v) for v in value]
    return value

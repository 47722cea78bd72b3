"""netgen: coupled heat-and-electricity networks from .etn text: solve them, export SPICE netlists.

The API's names are imported when first used (PEP 562), so that `netgen --help` and
`netgen check` start without numpy, scipy and the solvers.
"""
from __future__ import annotations

import importlib

__version__ = "0.1.0"

_API = {
    "load": "netgen.api", "run": "netgen.api", "sweep": "netgen.api", "tolerance": "netgen.api",
    "Design": "netgen.model.design",
    "Results": "netgen.checks.results", "NetgenError": "netgen.model.errors",
}


def __getattr__(name: str):
    if name not in _API:
        raise AttributeError(f"module 'netgen' has no attribute {name!r}")
    value = getattr(importlib.import_module(_API[name]), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(list(globals()) + list(_API))


__all__ = ["load", "run", "sweep", "tolerance", "Design", "Results", "NetgenError", "__version__"]

"""A study's rows as the Python API hands them out: a pandas DataFrame when pandas is installed,
else a dict of numpy arrays by column (numbers as floats, the `error` column as text)."""
from __future__ import annotations

import numpy as np


def frame(cols: list[str], body: list[dict]):
    """`cols` over the rows `body` (dicts); a value a row lacks is NaN (or "" for text)."""
    data = {}
    for c in cols:
        values = [d.get(c) for d in body]
        if c == "error" or any(isinstance(v, str) for v in values):
            data[c] = np.array(["" if v is None else str(v) for v in values], dtype=object)
        elif c == "run":
            data[c] = np.array(values, dtype=int)
        else:
            data[c] = np.array([np.nan if v is None else float(v) for v in values], dtype=float)
    try:
        import pandas
    except ImportError:
        return data
    return pandas.DataFrame(data, columns=cols)

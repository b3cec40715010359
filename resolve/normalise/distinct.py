"""Run a column-wise function once per distinct value and spread the result back.

Customer extracts repeat values heavily (common given names, shared landlines, birth dates),
so normalising the distinct values and gathering the results by position is both faster and
deterministic. Every normaliser goes through `on_distinct` so that slow per-value library
calls (phone parsing, email validation) are made once per distinct string at most.
"""

from __future__ import annotations

from typing import Callable

import numpy as np
import pandas as pd


def clean_text(values: pd.Series) -> pd.Series:
    """Strip surrounding white space and turn empty strings into <NA>, as pandas string dtype."""
    s = values.astype("string").str.strip()
    return s.mask(s == "")


def on_distinct(
    values: pd.Series,
    func: Callable[[pd.Series], pd.DataFrame],
    *,
    extra: pd.Series | None = None,
) -> pd.DataFrame:
    """Apply ``func`` to the distinct values of ``values`` (and ``extra``) and align the result.

    ``func`` receives a Series of distinct values (or, with ``extra``, a DataFrame with columns
    ``value`` and ``extra`` holding distinct combinations) indexed 0..k-1 and must return a
    DataFrame with the same index. Missing values are passed through as <NA>, once.
    The returned frame has the index of ``values``.
    """
    if extra is None:
        codes, uniques = pd.factorize(values, use_na_sentinel=False)
        arg = pd.Series(uniques, dtype=values.dtype if len(uniques) else "string")
    else:
        # Factorise each column, then the pair of integer codes: far cheaper than a
        # MultiIndex of Python objects, and the same first-seen order.
        values, extra = values.astype("string"), extra.astype("string")
        vcodes, vuniques = pd.factorize(values.array, use_na_sentinel=False)
        ecodes, euniques = pd.factorize(extra.array, use_na_sentinel=False)
        width = max(len(euniques), 1)
        codes, pairs = pd.factorize(vcodes.astype(np.int64) * width + ecodes)
        arg = pd.DataFrame({"value": vuniques.take(pairs // width),
                            "extra": euniques.take(pairs % width)})
    result = func(arg.reset_index(drop=True))
    out = result.iloc[np.asarray(codes, dtype=np.int64)]
    out.index = values.index
    return out

"""Cohorts beyond one machine: the batch computation on a data frame.

:func:`derive_frame` takes a pandas DataFrame (or an Arrow table) whose columns have the
batch names (:mod:`model.batch`: ``pao2_mmhg`` or ``pao2_kpa``, ``hb_g_dl`` or ``hb_g_l``,
...), keeps every column it does not read (ids, times) and returns the frame with the
derived columns added, so a Dask cluster runs a cohort partition by partition::

    import dask.dataframe as dd
    from o2transit.model.cohort import derive_frame

    gases = dd.read_parquet("cohort/")            # a partitioned Parquet dataset
    derived = gases.map_partitions(derive_frame, meta=derive_frame(gases._meta))
    derived.to_parquet("derived/")

The numbers are those of ``o2transit batch`` row for row (the same function derives both).
pandas (and Dask for the line above) come with the optional extra
``pip install o2transit[cohort]``; this module imports pandas only when called.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa

from .batch import ALL_OUTPUTS, BATCH_OUTPUTS, derive_columns


def derive_frame(df: Any, *, all_columns: bool = False):
    """The batch's derived values for every row of a data frame.

    Parameters
    ----------
    df : pandas.DataFrame or pyarrow.Table
        Blood gases under the batch column names (numbers, or text cells as in a CSV file);
        other columns are kept unchanged.
    all_columns : bool
        Every output of :func:`model.bedside.derive` (``ALL_OUTPUTS``) instead of
        ``BATCH_OUTPUTS``.

    Returns
    -------
    pandas.DataFrame or pyarrow.Table
        The input's columns (and, for pandas, its index), then the derived columns: floats
        (NaN where not computable) and text (categories, ``p50_insitu_reason``, ``notes``,
        ``reasons``, ``flags``, ``error``). A row that cannot be used has its message in
        ``error`` and blank outputs; the other rows are unaffected.

    Raises
    ------
    model.batch.BatchError
        A required column is missing, or two columns give the same quantity.

    Examples
    --------
    >>> import pandas as pd
    >>> gases = pd.DataFrame({"bed": ["4", "5"], "pao2_kpa": [8.0, 9.0], "paco2_mmhg": [40, 40],
    ...     "ph": [7.4, 7.4], "sao2": [0.92, 0.93], "hb_g_dl": [12, 12], "fio2": [0.4, 0.5],
    ...     "temperature_c": [37, 37]})
    >>> out = derive_frame(gases)
    >>> out[["bed", "pao2_fio2_ratio"]].round(1).values.tolist()
    [['4', 150.0], ['5', 135.0]]
    """
    outputs = ALL_OUTPUTS if all_columns else BATCH_OUTPUTS
    if isinstance(df, pa.Table):
        derived, errors = derive_columns({n: df.column(n) for n in df.column_names})
        added = {k: _column(derived, errors, k) for k in outputs}
        return pa.Table.from_arrays(
            list(df.columns) + [pa.array(v, from_pandas=True) for v in added.values()],
            names=list(df.column_names) + list(added),
        )
    import pandas as pd

    columns = {str(c): df[c] for c in df.columns}
    if len(df) == 0:
        empty = {k: pd.Series([], dtype=object if k in _TEXT else float) for k in outputs}
        return pd.concat([df, pd.DataFrame(empty, index=df.index)], axis=1)
    derived, errors = derive_columns(
        {
            k: (v.to_numpy() if v.dtype.kind in "fiub" else v.astype(object).to_numpy())
            for k, v in columns.items()
        }
    )
    added = pd.DataFrame({k: _column(derived, errors, k) for k in outputs}, index=df.index)
    for k in outputs:
        if k in _TEXT:
            added[k] = added[k].astype(object)
    return pd.concat([df, added], axis=1)


_TEXT = {
    "pf_category_berlin",
    "pf_category_global2024",
    "sf_category_global2024",
    "p50_insitu_reason",
    "notes",
    "reasons",
    "flags",
    "error",
}


def _column(derived, errors, key: str) -> np.ndarray:
    if key == "error":
        return np.asarray(errors, dtype=object)
    return np.asarray(derived[key])

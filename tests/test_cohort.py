"""Tests for model.cohort: derive_frame on pandas and Arrow, and a cohort on a Dask cluster
giving the numbers of ``o2transit batch`` row for row."""

from __future__ import annotations

import io
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from o2transit.model.batch import BATCH_OUTPUTS, BatchError, run_batch
from o2transit.model.cohort import derive_frame

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "bench"))
from bench_batch import COLUMNS, cohort

TEXT = (
    "pf_category_berlin",
    "pf_category_global2024",
    "sf_category_global2024",
    "p50_insitu_reason",
    "notes",
    "reasons",
    "flags",
    "error",
)


def _gases(n: int, seed: int = 3) -> pd.DataFrame:
    data = cohort(n, seed=seed)
    frame = pd.DataFrame({c: np.round(data[c], 3) for c in COLUMNS})
    frame.insert(0, "patient", [f"p{i}" for i in range(n)])
    frame.insert(1, "taken", pd.date_range("2026-01-01", periods=n, freq="min"))
    frame.loc[5, "fio2"] = 4.0  # a bad cell: its row gets an error, the others do not
    return frame


def _assert_same(a: pd.DataFrame, b: pd.DataFrame) -> None:
    for key in BATCH_OUTPUTS:
        if key in TEXT:
            assert a[key].fillna("").tolist() == b[key].fillna("").tolist(), key
        else:
            np.testing.assert_array_equal(a[key].to_numpy(float), b[key].to_numpy(float), key)


def test_extra_columns_are_kept_and_derived_columns_added():
    frame = _gases(40)
    out = derive_frame(frame)
    assert list(out.columns) == list(frame.columns) + list(BATCH_OUTPUTS)
    assert out["patient"].tolist() == frame["patient"].tolist()
    assert (out["taken"] == frame["taken"]).all() and (out.index == frame.index).all()
    assert "fio2 = 4 is outside" in out.loc[5, "error"] and np.isnan(out.loc[5, "do2_ml_min"])
    assert (out.drop(index=5)["error"] == "").all()


def test_arrow_and_pandas_give_the_same_numbers():
    frame = _gases(30)
    from_arrow = derive_frame(pa.Table.from_pandas(frame, preserve_index=False)).to_pandas()
    _assert_same(derive_frame(frame), from_arrow)


def test_a_missing_column_is_a_batch_error():
    with pytest.raises(BatchError, match="required column missing: pao2_mmhg or pao2_kpa"):
        derive_frame(_gases(3).drop(columns="pao2_mmhg"))


def test_dask_cluster_on_a_partitioned_dataset_matches_the_batch_row_for_row(tmp_path):
    dd = pytest.importorskip("dask.dataframe")
    distributed = pytest.importorskip("distributed")
    frame = _gases(3000)
    dataset = tmp_path / "cohort"
    dataset.mkdir()
    for i, part in enumerate(np.array_split(np.arange(len(frame)), 4)):
        pq.write_table(
            pa.Table.from_pandas(frame.iloc[part], preserve_index=False), dataset / f"p{i}.parquet"
        )
    single = tmp_path / "single.parquet"
    pq.write_table(pa.Table.from_pandas(frame, preserve_index=False), single)
    batch_out = tmp_path / "batch.parquet"
    run_batch(single, batch_out, stream=io.StringIO())
    expected = pq.read_table(batch_out).to_pandas()

    with (
        distributed.LocalCluster(
            n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
        ) as cluster,
        distributed.Client(cluster),
    ):
        gases = dd.read_parquet(str(dataset))
        derived = gases.map_partitions(derive_frame, meta=derive_frame(gases._meta))
        got = derived.compute().sort_values("patient", key=lambda s: s.str[1:].astype(int))
    got = got.reset_index(drop=True)
    assert got["patient"].tolist() == expected["patient"].tolist()
    _assert_same(got, expected)

"""Timing of ``o2transit batch`` against a naive per-row loop, side by side.

Run with ``make bench`` (not part of the tests). A cohort file of 100,000 invented blood
gases (about 1 % malformed rows) is written to a temporary folder; then

* vectorised: :func:`model.batch.run_batch` on the whole file, end to end (read, check,
  derive, format, write);
* naive baseline: the same file row by row, ``csv.DictReader`` -> ``check_measured`` ->
  ``derive`` on scalars -> ``csv.writer``, the way a first script would do it.

The naive loop takes minutes on 100,000 rows, so it runs on the first ``--naive-rows``
rows and its time is scaled per row to the whole file (printed as "extrapolated"). The
same split is timed for ``derive`` alone (arrays vs one scalar call per row). Absolute
times drift on a shared machine; the ratio is what to compare. Target: the whole file in
under 5 s.
"""

from __future__ import annotations

import argparse
import csv
import io
import math
import tempfile
import time
from pathlib import Path

import numpy as np
from o2transit.model.batch import BATCH_OUTPUTS, run_batch
from o2transit.model.bedside import DERIVED_FIELDS, check_measured, derive

N_ROWS = 100_000
TARGET_S = 5.0
COLUMNS = (
    "pao2_mmhg",
    "paco2_mmhg",
    "ph",
    "sao2",
    "hb_g_dl",
    "fio2",
    "temperature_c",
    "pb_mmhg",
    "age_years",
    "pvo2_mmhg",
    "svo2",
    "pvco2_mmhg",
    "cardiac_output_l_min",
)


def cohort(n: int, seed: int = 7) -> dict[str, np.ndarray]:
    """Invented, loosely plausible ICU blood gases (not patient data)."""
    rng = np.random.default_rng(seed)
    sao2 = rng.uniform(0.82, 0.99, n)
    return {
        "pao2_mmhg": rng.uniform(45.0, 250.0, n),
        "paco2_mmhg": rng.uniform(28.0, 65.0, n),
        "ph": rng.uniform(7.15, 7.52, n),
        "sao2": sao2,
        "hb_g_dl": rng.uniform(6.5, 16.5, n),
        "fio2": rng.uniform(0.21, 1.0, n),
        "temperature_c": rng.uniform(34.5, 40.0, n),
        "pb_mmhg": rng.uniform(560.0, 770.0, n),
        "age_years": rng.uniform(18.0, 95.0, n),
        "pvo2_mmhg": rng.uniform(25.0, 48.0, n),
        "svo2": np.minimum(sao2 - 0.05, rng.uniform(0.45, 0.82, n)),
        "pvco2_mmhg": rng.uniform(35.0, 75.0, n),
        "cardiac_output_l_min": rng.uniform(2.5, 9.0, n),
    }


def write_cohort(path: Path, n: int) -> None:
    data = cohort(n)
    rng = np.random.default_rng(11)
    bad = set(rng.choice(n, size=n // 100, replace=False).tolist())
    with open(path, "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(("case",) + COLUMNS)
        cols = [np.round(data[c], 3).tolist() for c in COLUMNS]
        for i, values in enumerate(zip(*cols)):
            cells = [f"{v:g}" for v in values]
            if i in bad:
                cells[i % len(cells)] = ("x", "", "9999")[i % 3]
            w.writerow([f"c{i}"] + cells)


def naive_batch(src: Path, dst: Path, n_rows: int) -> None:
    """The baseline: one row at a time through check_measured and derive."""
    with open(src, newline="") as f_in, open(dst, "w", newline="") as f_out:
        reader = csv.DictReader(f_in)
        writer = csv.writer(f_out)
        writer.writerow(list(reader.fieldnames) + list(BATCH_OUTPUTS))
        for k, row in enumerate(reader):
            if k >= n_rows:
                break
            measured = {
                ("barometric_pressure_mmhg" if c == "pb_mmhg" else c): row[c] or None
                for c in COLUMNS
            }
            try:
                d = derive(**check_measured(measured))
                error = ""
            except ValueError as exc:
                d, error = {}, str(exc)
            out = []
            for key in BATCH_OUTPUTS:
                if key == "error":
                    out.append(error)
                elif key not in d:
                    out.append("")
                elif d[key].dtype == object:
                    out.append(str(d[key]))
                else:
                    v = float(d[key])
                    out.append(f"{v:.{DERIVED_FIELDS[key][2]}f}" if math.isfinite(v) else "")
            writer.writerow(list(row.values()) + out)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--strict", action="store_true", help="exit 1 when the target is missed")
    parser.add_argument("--rows", type=int, default=N_ROWS)
    parser.add_argument("--naive-rows", type=int, default=1000)
    args = parser.parse_args(argv)
    n, n_naive = args.rows, min(args.naive_rows, args.rows)
    with tempfile.TemporaryDirectory() as tmp:
        src = Path(tmp) / "cohort.csv"
        write_cohort(src, n)
        print(
            f"\no2transit batch, {n:,} rows ({src.stat().st_size / 1e6:.1f} MB, ~1 % malformed); "
            f"naive: first {n_naive:,} rows, extrapolated"
        )
        print(f"{'':<34} {'vectorised':>12} {'naive loop':>14} {'ratio':>8}")

        t0, c0 = time.perf_counter(), time.process_time()
        summary = run_batch(src, Path(tmp) / "out.csv", progress=False, stream=io.StringIO())
        t_fast, c_fast = time.perf_counter() - t0, time.process_time() - c0
        t0 = time.perf_counter()
        naive_batch(src, Path(tmp) / "naive.csv", n_naive)
        t_naive = (time.perf_counter() - t0) / n_naive * n
        print(
            f"{'whole file (read..write)':<34} {t_fast:>10.2f} s {t_naive:>12.1f} s "
            f"{t_naive / t_fast:>7.0f}x  ({summary.rows_with_errors:,} rows with an error)"
        )

        data = cohort(n)
        data["barometric_pressure_mmhg"] = data.pop("pb_mmhg")
        t0 = time.perf_counter()
        derive(**data)
        t_derive = time.perf_counter() - t0
        t0 = time.perf_counter()
        for i in range(n_naive):
            derive(**{k: float(v[i]) for k, v in data.items()})
        t_derive_naive = (time.perf_counter() - t0) / n_naive * n
        print(
            f"{'derive only':<34} {t_derive:>10.2f} s {t_derive_naive:>12.1f} s "
            f"{t_derive_naive / t_derive:>7.0f}x"
        )
    verdict = "met" if t_fast < TARGET_S else "MISSED"
    print(
        f"  target: {n:,} rows in {t_fast:.2f} s < {TARGET_S:g} s -> {verdict} "
        f"(CPU time of the run {c_fast:.2f} s; wall above CPU means other load)"
    )
    return 0 if t_fast < TARGET_S or not args.strict else 1


if __name__ == "__main__":
    raise SystemExit(main())

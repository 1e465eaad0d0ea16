"""Writers for output tables: CSV with sensible precision, Parquet beside it for large tables."""

from __future__ import annotations

import os
from pathlib import Path

import pandas as pd

from .atomic import atomic_path

__all__ = ["write_csv", "round_for_output", "PARQUET_ROWS"]

#: Tables with more rows than this are also written as Parquet (when pyarrow is installed).
PARQUET_ROWS = 1_000_000

_DEGREE_COLUMNS = ("lon", "lat")


def round_for_output(df: pd.DataFrame) -> pd.DataFrame:
    """Round floats for people: degrees to 1e-8 (about 1 mm), seconds to 1e-6, slowness to 1e-9, the rest to 1e-3."""
    out = df.copy()
    for c in out.columns:
        if not pd.api.types.is_float_dtype(out[c].dtype):
            continue
        name = str(c)
        if name in _DEGREE_COLUMNS or name.endswith(("_lon", "_lat")):
            out[c] = out[c].round(8)
        elif "ray_parameter" in name or "slowness" in name:
            out[c] = out[c].round(9)
        elif name.endswith("_s") or name in ("time_s",):
            out[c] = out[c].round(6)
        else:
            out[c] = out[c].round(3)
    return out


def write_csv(target: str | os.PathLike, df: pd.DataFrame, *, mode: str = "w", header: bool = True) -> Path:
    """Write ``df`` as CSV atomically (temporary file, then rename)."""
    target = Path(target)
    with atomic_path(target) as tmp:
        round_for_output(df).to_csv(tmp, index=False, mode=mode, header=header)
    return target

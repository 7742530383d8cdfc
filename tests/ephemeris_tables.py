"""Small hand-made ephemeris tables for the selection tests (the columns the selection reads)."""

import pandas as pd


def ephemeris_table(rows) -> pd.DataFrame:
    """Rows of dicts -> a table laid out like a navigation reader's: times datetime64[ns],
    sorted by (sv, toc), RangeIndex."""
    frame = pd.DataFrame(rows)
    for col in ("toe", "toc", "transmission_time"):
        if col in frame:
            frame[col] = frame[col].astype("datetime64[ns]")
    return frame.sort_values(["sv", "toc"]).reset_index(drop=True)

"""Write each golden CSV input also as Parquet, JSON lines and Excel.

Run from the repository root after changing a golden CSV:
``python tests/data/ingest/convert.py``.  Values keep the types pandas infers
from the CSV (numbers as numbers, text as text), so every reader's native-type
path is exercised.  Excel workbook timestamps are fixed so the files are
byte-stable.
"""

from __future__ import annotations

import datetime as dt
import json
import math
from pathlib import Path

import openpyxl
import pandas as pd

HERE = Path(__file__).resolve().parent
FIXED_TIME = dt.datetime(2026, 1, 1, 0, 0, 0)


def convert(csv_path: Path) -> None:
    frame = pd.read_csv(csv_path, dtype=None, keep_default_na=True)
    stem = csv_path.with_suffix("")
    frame.to_parquet(stem.with_suffix(".parquet"), index=False)
    with open(stem.with_suffix(".jsonl"), "w", encoding="utf-8") as out:
        for record in frame.to_dict(orient="records"):
            clean = {k: (None if isinstance(v, float) and math.isnan(v) else v) for k, v in record.items()}
            out.write(json.dumps(clean) + "\n")
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "data"
    sheet.append(list(frame.columns))
    for record in frame.itertuples(index=False):
        sheet.append([None if isinstance(v, float) and math.isnan(v) else (v.item() if hasattr(v, "item") else v) for v in record])
    book.properties.created = FIXED_TIME
    book.properties.modified = FIXED_TIME
    book.save(stem.with_suffix(".xlsx"))


if __name__ == "__main__":
    for layout in ("attempts", "events", "drills", "canonical"):
        for path in sorted((HERE / layout).glob("*.csv")):
            if path.name != "expected.csv":
                convert(path)
                print("converted", path.relative_to(HERE))

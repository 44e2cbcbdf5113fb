"""The parse-validate-store half of Lockstep's ingest done with numpy + sqlite3 (no pandas), for the
ratio printed by bench/ingest.ts. Reads the same generated CSV, checks that every feature is finite
and every timestamp has a zone, and stores one row per wafer-step with the Float64 vector as a blob,
in one transaction. It does not score (Lockstep's figure includes scoring against active baselines).

usage: python3 bench/ingest_numpy.py <file.csv> <out.sqlite>   → prints JSON {seconds, rows}
"""
import json
import sqlite3
import sys
import time
from datetime import datetime

import numpy as np

path, out = sys.argv[1], sys.argv[2]
t0 = time.perf_counter()
con = sqlite3.connect(out)
con.execute("PRAGMA journal_mode=WAL")
con.execute("PRAGMA synchronous=NORMAL")
con.execute(
    "CREATE TABLE wafer_steps (id INTEGER PRIMARY KEY, wafer_id TEXT, lot_id TEXT, chamber TEXT, recipe TEXT,"
    " step TEXT, processed_at INTEGER, feature_values BLOB, UNIQUE (wafer_id, recipe, step))"
)
rows = 0
with open(path, encoding="utf-8") as f:
    header = f.readline().rstrip("\n").split(",")
    nfeat = len(header) - 6
    con.execute("BEGIN")
    while True:
        lines = f.readlines(64 * 1024 * 1024)
        if not lines:
            break
        ids = [ln.split(",", 6)[:6] for ln in lines]
        X = np.loadtxt(lines, delimiter=",", usecols=range(6, 6 + nfeat), dtype=np.float64, ndmin=2)
        if not np.isfinite(X).all():
            raise SystemExit("non-finite value")
        recs = []
        for (w, lot, ch, rc, st, at), v in zip(ids, X):
            ts = datetime.fromisoformat(at)
            if ts.tzinfo is None:
                raise SystemExit("timestamp without zone")
            recs.append((w, lot, ch, rc, st, int(ts.timestamp() * 1000), v.astype("<f8").tobytes()))
        con.executemany(
            "INSERT OR IGNORE INTO wafer_steps (wafer_id, lot_id, chamber, recipe, step, processed_at, feature_values)"
            " VALUES (?,?,?,?,?,?,?)",
            recs,
        )
        rows += len(recs)
    con.execute("COMMIT")
con.close()
print(json.dumps({"seconds": time.perf_counter() - t0, "rows": rows}))

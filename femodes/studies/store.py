"""A sweep's results on disk, one row per finished point, in SQLite (Python's sqlite3).

Each point is committed as soon as it is known, so an interrupted sweep (Ctrl-C, a killed
process, a lost machine) loses at most the points in flight; running the same sweep again takes
the stored points and computes only the missing ones.  The settings that decide the results (the
shape, its fixed parameters, the mode count, the accuracy and the solver options) are stored
with the points: a store made with other settings is refused, never mixed.
"""

from __future__ import annotations

import json
import sqlite3
from pathlib import Path

from femodes.errors import FemodesError

__all__ = ["SweepStore", "STORE_KIND", "stored_points"]

#: written into every store, so that another SQLite file is not taken for one
STORE_KIND = "femodes sweep store, version 1"


class SweepStore:
    """An open store: ``get(key)`` a stored point's result (or None), ``put(key, result)`` one
    point, committed at once.  Keys and results are JSON texts.  Use as a context manager."""

    def __init__(self, path, settings):
        self.path = Path(path)
        text = json.dumps(settings, sort_keys=True)
        if self.path.exists() and self.path.is_dir():
            raise FemodesError(f"store {self.path} is a directory: give a file name, e.g. sweep.db")
        if not self.path.parent.is_dir():
            raise FemodesError(f"cannot create store {self.path}: the directory {self.path.parent} does not exist; "
                               "create it or give another file name")
        try:
            self._db = sqlite3.connect(str(self.path))
            self._db.execute("CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT)")
            self._db.execute("CREATE TABLE IF NOT EXISTS points (key TEXT PRIMARY KEY, result TEXT)")
            rows = dict(self._db.execute("SELECT key, value FROM meta"))
        except sqlite3.DatabaseError as exc:
            raise FemodesError(f"store {self.path} is not a femodes sweep store ({exc}): give a new file name, "
                               "or the store of this sweep") from None
        if not rows:
            with self._db:
                self._db.executemany("INSERT INTO meta VALUES (?, ?)", [("kind", STORE_KIND), ("settings", text)])
        elif rows.get("kind") != STORE_KIND:
            self.close()
            raise FemodesError(f"store {self.path} is not a femodes sweep store: give a new file name")
        elif rows.get("settings") != text:
            old = json.loads(rows["settings"])
            diff = sorted(k for k in set(old) | set(settings) if old.get(k) != settings.get(k))
            self.close()
            raise FemodesError(f"store {self.path} holds a sweep made with other settings ({', '.join(diff)} differ); "
                               "its points would not match: give a new store file, or the settings it was made with")

    def keys(self):
        return {k for (k,) in self._db.execute("SELECT key FROM points")}

    def get(self, key):
        row = self._db.execute("SELECT result FROM points WHERE key = ?", (key,)).fetchone()
        return None if row is None else json.loads(row[0])

    def put(self, key, result):
        with self._db:
            self._db.execute("INSERT OR REPLACE INTO points VALUES (?, ?)", (key, json.dumps(result)))

    def close(self):
        self._db.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()


def stored_points(path):
    """How many finished points the store at ``path`` holds (read only; '?' where it cannot be
    read): what an interrupted sweep kept."""
    try:
        db = sqlite3.connect(f"file:{Path(path).resolve()}?mode=ro", uri=True)
        try:
            return db.execute("SELECT COUNT(*) FROM points").fetchone()[0]
        finally:
            db.close()
    except sqlite3.Error:
        return "?"

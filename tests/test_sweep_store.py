"""The SQLite result store: round trips, one row per key, attempts counted, WAL mode."""

import sqlite3

from fluxlab.sweep import ResultStore


def test_round_trip_and_upsert(tmp_path):
    path = tmp_path / "r.sqlite"
    with ResultStore(path) as store:
        store.put("k1", "failed", studies="point", parameters={"a": 1.5}, machine={"m": 1},
                  message="ConvergenceError: no")
        first = store.get("k1")
        store.put("k1", "done", studies="point", parameters={"a": 1.5}, machine={"m": 1},
                  summary={"torque_mean_Nm": 12.5, "x": None},
                  curves={"torque_vs_position": {"position_deg": [0, 1], "torque_Nm": [1, 2]}},
                  elapsed_s=0.25)
        store.put("k2", "rejected", studies="point", parameters={"a": 9}, machine={"m": 2},
                  message="- too wide")
    with ResultStore(path) as store:  # reopened: everything was committed
        again = store.get("k1")
        assert again.status == "done" and again.attempts == 2
        assert again.created_at == first.created_at
        assert again.summary == {"torque_mean_Nm": 12.5, "x": None}
        assert again.curves["torque_vs_position"]["torque_Nm"] == [1, 2]
        assert store.statuses() == {"k1": "done", "k2": "rejected"}
        assert store.counts() == {"done": 1, "rejected": 1, "failed": 0}
        assert store.get("nope") is None
    mode = sqlite3.connect(path).execute("PRAGMA journal_mode").fetchone()[0]
    assert mode == "wal"


def test_bad_status_is_refused(tmp_path):
    with ResultStore(tmp_path / "r.sqlite") as store:
        try:
            store.put("k", "maybe", studies="point", parameters={}, machine={})
        except ValueError as err:
            assert "maybe" in str(err)
        else:
            raise AssertionError("a status outside done/rejected/failed was stored")
        assert store.statuses() == {}

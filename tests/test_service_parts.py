"""The parts of the service on their own: catalogue, keys, outcome, worker pool, commands."""

import asyncio
import json
import os
import shutil
import stat
import time
from pathlib import Path

import pytest

from icing.errors import InputError
from icing.service.catalog import Catalogue, forecast_id
from icing.service.keys import KeyRing, add_key, hash_key, read_key_file, remove_key
from icing.service.outcome import verdict
from icing.service.ratelimit import RateLimiter

REPO = Path(__file__).resolve().parents[1]
PROFILES = REPO / "fixtures" / "skerrow-profiles.json"


# ----------------------------------------------------------------------------- catalogue


def test_catalogue_ids_skips_and_subfolders(tmp_path):
    shutil.copy(PROFILES, tmp_path / "profiles.json")
    shutil.copy(PROFILES, tmp_path / "odd name:01.json")
    (tmp_path / ".hidden.json").write_text("{}")
    (tmp_path / "late.nc.part").write_bytes(b"CDF\x01")
    (tmp_path / "multi").mkdir()
    shutil.copy(PROFILES, tmp_path / "multi" / "a.json")
    cat = Catalogue(tmp_path)
    cat.refresh(force=True)
    ids = [e.id for e in cat.entries()]
    assert ids == ["multi", forecast_id("odd name:01.json"), "profiles.json"]
    assert forecast_id("odd name:01.json").startswith("odd-name-01.json-")
    assert forecast_id("odd name:01.json") == forecast_id("odd name:01.json")  # stable
    assert all(e.available for e in cat.entries())
    assert cat.get("multi").info["valid_from"] == "2027-01-14T06:00:00Z"
    assert str(tmp_path) not in json.dumps([e.info for e in cat.entries()])


def test_catalogue_rescan_sees_new_changed_and_removed_files(tmp_path):
    cat = Catalogue(tmp_path, min_interval_s=3600)
    cat.refresh(force=True)
    assert cat.entries() == []
    shutil.copy(PROFILES, tmp_path / "a.json")
    assert cat.refresh() is False and cat.get("a.json") is None  # not due yet
    assert cat.refresh(force=True) is True and cat.get("a.json").available
    before = cat.get("a.json")
    assert cat.refresh(force=True) is False and cat.get("a.json") is before  # unchanged
    doc = json.loads(PROFILES.read_text())
    doc["profiles"] = doc["profiles"][:3]
    (tmp_path / "a.json").write_text(json.dumps(doc))
    os.utime(tmp_path / "a.json", ns=(1, time.time_ns() + 10**9))
    assert cat.refresh(force=True) is True
    assert cat.get("a.json").info["profiles"] == 3
    (tmp_path / "a.json").unlink()
    assert cat.refresh(force=True) is True and cat.get("a.json") is None


def test_catalogue_unreadable_file_is_listed_with_a_reason_without_path(tmp_path):
    (tmp_path / "bad.json").write_text("{")
    cat = Catalogue(tmp_path)
    cat.refresh(force=True)
    entry = cat.get("bad.json")
    assert not entry.available and entry.info["status"] == "unavailable"
    assert entry.info["reason"] and str(tmp_path) not in entry.info["reason"]


def test_catalogue_folder_must_exist(tmp_path):
    with pytest.raises(InputError, match="--catalog"):
        Catalogue(tmp_path / "nowhere")


# ----------------------------------------------------------------------------- keys


def test_key_file_stores_only_hashes(tmp_path):
    path = tmp_path / "keys.txt"
    key = add_key(path, "ops")
    text = path.read_text()
    assert key.startswith("icing_") and len(key) > 40
    assert key not in text and hash_key(key).hex() in text
    assert stat.S_IMODE(path.stat().st_mode) == 0o600
    other = add_key(path, "planner")
    assert other != key
    assert [r.name for r in read_key_file(path)] == ["ops", "planner"]
    ring = KeyRing(path)
    assert ring.verify(key) == "ops" and ring.verify(other) == "planner"
    assert ring.verify(key + "x") is None and ring.verify("") is None
    assert ring.verify(None) is None and ring.verify("a" * 10_000) is None
    with pytest.raises(InputError, match="exists"):
        add_key(path, "ops")
    with pytest.raises(InputError, match="not allowed"):
        add_key(path, "has space")


def test_key_ring_sees_a_removed_key_without_restart(tmp_path):
    path = tmp_path / "keys.txt"
    key = add_key(path, "ops")
    ring = KeyRing(path, recheck_s=0)
    assert ring.verify(key) == "ops"
    remove_key(path, "ops")
    assert ring.verify(key) is None
    path.write_text("garbage line here too many fields\n")
    assert ring.verify(key) is None  # a broken file admits nobody


@pytest.mark.parametrize(
    ("line", "match"),
    [
        ("ops md5:abc", "sha256"),
        ("ops", "NAME sha256"),
        ("ops sha256:" + "0" * 64 + "\nops sha256:" + "1" * 64, "twice"),
    ],
)
def test_key_file_errors_name_the_line(tmp_path, line, match):
    path = tmp_path / "keys.txt"
    path.write_text("# comment\n\n" + line + "\n")
    with pytest.raises(InputError, match=match) as err:
        read_key_file(path)
    assert "line 3" in str(err.value) or "line 4" in str(err.value)


# ----------------------------------------------------------------------------- outcome


def test_verdict_sums_up_the_library_outcomes():
    # each route's outcome is the library's (tests/test_outcomes.py); the request's verdict
    # is met when any route met the condition, else incomplete, else not-met
    summaries = [
        {"route": "a", "outcome": "not-met"},
        {"route": "b", "outcome": "incomplete"},
        {"route": "c", "outcome": "met"},
    ]
    assert verdict(summaries, fail_on="severe") == {
        "fail_on": "severe",
        "accept_gaps": False,
        "result": "met",
        "routes_met": ["c"],
    }
    assert verdict(summaries[:2], fail_on="severe")["result"] == "incomplete"
    assert verdict(summaries[:1], fail_on="severe")["result"] == "not-met"
    assert verdict([{"route": "a", "outcome": None}])["result"] is None


# ----------------------------------------------------------------------------- rate limit


def test_token_bucket_refills_at_the_rate():
    now = [0.0]
    rl = RateLimiter(rate_per_s=2.0, burst=3, clock=lambda: now[0])
    assert [rl.take("k") for _ in range(3)] == [0.0, 0.0, 0.0]
    assert rl.take("k") == pytest.approx(0.5)
    assert rl.take("other") == 0.0  # per client
    now[0] = 0.5
    assert rl.take("k") == 0.0
    assert not RateLimiter(rate_per_s=0, burst=1).take("k")  # off


# ----------------------------------------------------------------------------- worker pool


def _run(coro):
    return asyncio.run(coro)


async def _replaced(pool):
    """Wait until the pool's worker is back (a replacement starts in the background)."""
    for _ in range(600):
        if pool._idle.qsize() == pool._slots:
            return
        await asyncio.sleep(0.05)
    raise AssertionError("no replacement worker")


def test_pool_survives_a_crash_and_a_runaway_job():
    from icing.service.pool import Busy, JobPool, RunTimeout, WorkerLost

    async def scenario():
        pool = JobPool(1, run_timeout_s=2.0, queue_limit=0, queue_timeout_s=1.0)
        await pool.start()
        try:
            with pytest.raises(WorkerLost):
                await pool.run({"kind": "sleep", "crash": True})
            await _replaced(pool)
            status, body, _ = await pool.run({"kind": "sleep", "seconds": 0.0})
            assert status == 200 and json.loads(body)["slept"] == 0.0
            with pytest.raises(RunTimeout):
                await pool.run({"kind": "sleep", "seconds": 60})
            await _replaced(pool)
            busy = asyncio.create_task(pool.run({"kind": "sleep", "seconds": 0.5}))
            await asyncio.sleep(0.1)
            with pytest.raises(Busy):
                await pool.run({"kind": "sleep", "seconds": 0.0})
            assert (await busy)[0] == 200
            stats = pool.stats()
            assert stats["workers_lost"] == 1 and stats["timeouts"] == 1
            assert stats["refused_busy"] == 1
        finally:
            await pool.close()

    _run(scenario())


def test_pool_queues_within_its_limit():
    from icing.service.pool import JobPool

    async def scenario():
        pool = JobPool(0, run_timeout_s=5.0, queue_limit=4, queue_timeout_s=5.0)
        await pool.start()
        try:
            results = await asyncio.gather(
                *[pool.run({"kind": "sleep", "seconds": 0.02}) for _ in range(5)]
            )
            assert [r[0] for r in results] == [200] * 5
        finally:
            await pool.close()

    _run(scenario())


# ----------------------------------------------------------------------------- commands


def test_serve_key_add_list_remove(tmp_path, capsys):
    from icing.cli import main

    path = tmp_path / "keys.txt"
    assert main(["serve-key", "add", "--api-keys", str(path), "--name", "ops"]) == 0
    key = capsys.readouterr().out.strip()
    assert KeyRing(path).verify(key) == "ops"
    assert main(["serve-key", "list", "--api-keys", str(path)]) == 0
    assert capsys.readouterr().out.startswith("ops\t")
    assert main(["serve-key", "add", "--api-keys", str(path), "--name", "ops"]) == 2
    assert "exists" in capsys.readouterr().err
    assert main(["serve-key", "remove", "--api-keys", str(path), "--name", "ops"]) == 0
    assert read_key_file(path) == []


def test_serve_refuses_a_missing_catalogue_or_key_file(tmp_path, capsys):
    from icing.cli import main

    assert main(["serve", "--catalog", str(tmp_path / "none")]) == 2
    assert "--catalog" in capsys.readouterr().err
    args = ["serve", "--catalog", str(tmp_path), "--api-keys", str(tmp_path / "k.txt")]
    assert main(args) == 2
    assert "serve-key add" in capsys.readouterr().err


def test_forecast_store_opens_once_and_reopens_on_change(tmp_path):
    from icing.service.jobs import ForecastStore

    shutil.copy(PROFILES, tmp_path / "a.json")
    shutil.copy(PROFILES, tmp_path / "b.json")
    store = ForecastStore(max_open=1)
    ref = {"id": "a.json", "paths": [str(tmp_path / "a.json")], "signature": (1,)}
    first = store.get(ref)
    assert store.get(ref) is first
    assert store.get(dict(ref, signature=(2,))) is not first  # the file changed
    again = store.get(dict(ref, signature=(2,)))
    store.get({"id": "b.json", "paths": [str(tmp_path / "b.json")], "signature": (1,)})
    assert store.get(dict(ref, signature=(2,))) is not again  # one kept open: reopened

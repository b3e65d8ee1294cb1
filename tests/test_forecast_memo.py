"""What opening a gridded file learned, kept per process (icing.forecast.memo).

No physics here: the checks are that a kept CRS or sample gives the same forecast as a
fresh look-up, that a rewritten file is read again, and that a grid worker given the
main process's entries opens the files without PROJ's database or the sample reads.
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import numpy as np
import pytest

from icing.forecast import load_forecast, memo
from icing.forecast.blocks import plan_blocks, read_block_columns

ROOT = Path(__file__).resolve().parents[1]
LCC = ROOT / "fixtures" / "skerrow-lcc.nc"


@pytest.fixture(autouse=True)
def _fresh():
    memo.clear()
    yield
    memo.clear()


def _block(fc):
    src = fc.sources[0]
    block = plan_blocks(src.y.size, src.x.size, [0], columns=64)[0]
    return read_block_columns(fc, block).columns


def _count_reads(monkeypatch):
    """Count the CRS look-ups and sample reads that reach the file or PROJ."""
    import pyproj

    counts = {"crs": 0, "samples": 0}
    from_cf = pyproj.CRS.from_cf
    sample = memo.sample

    def counted_from_cf(*a, **k):
        counts["crs"] += 1
        return from_cf(*a, **k)

    def counted_sample(path, variable, index, read, order=()):
        def counted_read():
            counts["samples"] += 1
            return read()

        return sample(path, variable, index, counted_read, order)

    monkeypatch.setattr(pyproj.CRS, "from_cf", staticmethod(counted_from_cf))
    monkeypatch.setattr(memo, "sample", counted_sample)
    return counts


def test_a_second_opening_reads_nothing_again_and_gives_the_same_forecast(monkeypatch):
    counts = _count_reads(monkeypatch)
    first = load_forecast([LCC])
    after_first = dict(counts)
    assert after_first["crs"] == 1 and after_first["samples"] > 0
    second = load_forecast([LCC])
    assert counts == after_first  # nothing looked up or read again
    assert second.sources[0].crs == first.sources[0].crs
    a, b = _block(first), _block(second)
    assert a.keys() == b.keys()
    for k in a:
        np.testing.assert_array_equal(a[k], b[k], err_msg=k)
    assert second.describe() == first.describe()


def test_a_rewritten_file_is_read_again(tmp_path, monkeypatch):
    path = tmp_path / "copy.nc"
    shutil.copy(LCC, path)
    counts = _count_reads(monkeypatch)
    load_forecast([path])
    n = counts["samples"]
    st = os.stat(path)
    os.utime(path, ns=(st.st_atime_ns, st.st_mtime_ns + 1_000_000_000))  # "rewritten"
    load_forecast([path])
    assert counts["samples"] == 2 * n


def test_kept_samples_cannot_be_written_into():
    load_forecast([LCC])
    entries = memo.export()
    assert entries["samples"]
    for _, value in entries["samples"]:
        assert not value.flags.writeable


def test_a_worker_given_the_entries_opens_the_files_without_looking_up(monkeypatch):
    from icing.runs import grid

    load_forecast([LCC])
    entries = memo.export([str(LCC)])
    assert entries["crs"] and entries["samples"]
    memo.clear()  # as in a fresh worker process
    monkeypatch.setattr(grid, "_OPEN", {})
    counts = _count_reads(monkeypatch)
    job = grid.GridJob((str(LCC),), (), None, None, None, opened=entries)
    fc = grid._forecast_of(job)
    assert counts == {"crs": 0, "samples": 0}
    np.testing.assert_array_equal(
        _block(fc)["temperature"], _block(load_forecast([LCC]))["temperature"]
    )


def test_export_keeps_only_the_files_asked_for(tmp_path):
    other = tmp_path / "other.nc"
    shutil.copy(LCC, other)
    load_forecast([LCC])
    load_forecast([other])
    mine = memo.export([str(other)])
    assert mine["samples"]
    assert {k[0][0] for k, _ in mine["samples"]} == {os.path.realpath(other)}
    assert len(memo.export()["samples"]) == 2 * len(mine["samples"])


def test_a_path_that_cannot_be_stated_is_never_kept(tmp_path):
    calls = []

    class Var:
        name, dims, shape, attrs = "t", ("y", "x"), (2, 2), {}

    for _ in range(2):
        memo.sample(tmp_path / "absent.nc", Var, {"y": slice(0, None, 1)}, lambda: calls.append(1))
    assert len(calls) == 2
    assert memo.export()["samples"] == []

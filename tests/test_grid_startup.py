"""What keeps ``icing`` quick to start: transcriptions of MetPy and pint, the table cache.

The saturation law and the unit conversions met in most files are our own
transcriptions, so that a run does not load MetPy's calc module and pint (about a
second); these tests hold them to the reference libraries they transcribe (MetPy,
pint: the versions installed with the tests), exactly where the operations are the
same, and the collection table read back from the cache to the one just built.
"""

from __future__ import annotations

import os

import numpy as np
import pytest

from icing.calc import thermo
from icing.forecast import units


def test_metpy_constants_are_metpys():
    """Reference library: metpy.constants.nounit (MetPy 1.7); equal to the last bit."""
    from metpy.constants import nounit as mc

    for name, value in thermo.METPY_CONSTANTS.items():
        assert float(getattr(mc, name)) == value, name


@pytest.mark.parametrize("phase", ["liquid", "solid"])
def test_saturation_vapor_pressure_is_metpys(phase):
    """Reference library: metpy.calc.saturation_vapor_pressure (Ambaum 2020 eqs. 13 and
    17); the same operations in the same order, so equal to the last bit."""
    import metpy.calc as mpcalc

    t = np.linspace(150.0, 330.0, 2001)
    ours = thermo.saturation_vapor_pressure(t, phase=phase)
    theirs = mpcalc.saturation_vapor_pressure._nounit(t, phase=phase)
    np.testing.assert_array_equal(ours, theirs)


def test_dewpoint_first_guess_is_metpys():
    """Reference library: metpy.calc.dewpoint (the Bolton-type closed form MetPy writes);
    after the Newton steps the inverse is exact: e_s(Td(e)) = e to 1e-9."""
    from metpy.calc import dewpoint
    from metpy.units import units as u

    e = np.linspace(10.0, 5000.0, 500)
    val = np.log(e / 611.2)
    np.testing.assert_array_equal(
        273.15 + 243.5 * val / (17.67 - val), dewpoint(u.Quantity(e, "Pa")).m_as("K")
    )
    td = thermo.dewpoint_from_vapor_pressure(e)
    np.testing.assert_allclose(thermo.saturation_vapor_pressure(td), e, rtol=1e-9)


@pytest.mark.parametrize("spelling", sorted(units.KNOWN_UNITS))
def test_known_units_are_pints(monkeypatch, spelling):
    """Reference library: pint through MetPy's registry; every listed conversion and
    dimension is what pint says."""
    known = units.KNOWN_UNITS
    monkeypatch.setattr(units, "KNOWN_UNITS", {})  # force pint
    for target, conv in known[spelling][1].items():
        assert units.linear(spelling, target, path=None, name="") == conv
    for ref in ("Pa", "m"):
        monkeypatch.setattr(units, "KNOWN_UNITS", {})
        by_pint = units.is_dimension(spelling, ref)
        monkeypatch.setattr(units, "KNOWN_UNITS", known)
        assert units.is_dimension(spelling, ref) == by_pint


def test_a_screening_loads_neither_metpy_nor_pint_calc(tmp_path):
    import subprocess
    import sys
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    code = (
        "import sys; from icing.cli import main; main(['screen', sys.argv[1], '-f', "
        "sys.argv[2], '-a', 'twin-turboprop']); "
        "print(sorted(m for m in ('metpy', 'metpy.calc', 'matplotlib') if m in sys.modules))"
    )
    out = subprocess.run(
        [sys.executable, "-c", code, str(root / "routes" / "regional-dispatch.geojson"),
         str(root / "fixtures" / "skerrow-latlon.nc")],
        capture_output=True, text=True, check=True,
    ).stdout  # fmt: skip
    assert out.strip().splitlines()[-1] == "[]"


def test_collection_table_cache_gives_the_table_it_kept(tmp_path, monkeypatch):
    from icing.calc import collection

    monkeypatch.setenv("ICING_CACHE_DIR", str(tmp_path))
    collection.collection_table.cache_clear()
    try:
        built = collection.collection_table("finstad88", 2.0, 7)
        kept = list(tmp_path.glob("collection-table-*.npy"))
        assert len(kept) == 1
        collection.collection_table.cache_clear()
        again = collection.collection_table("finstad88", 2.0, 7)
        np.testing.assert_array_equal(built, again)
        assert not again.flags.writeable
        kept[0].write_bytes(b"not a table")  # a damaged file is built again, not trusted
        collection.collection_table.cache_clear()
        np.testing.assert_array_equal(collection.collection_table("finstad88", 2.0, 7), built)
    finally:
        collection.collection_table.cache_clear()


def test_one_cache_folder_for_the_table_and_the_compiled_loops(monkeypatch, tmp_path):
    """ICING_CACHE_DIR names the folder, empty keeps nothing, default the user's cache."""
    from icing.cachedir import cache_folder

    monkeypatch.setenv("ICING_CACHE_DIR", str(tmp_path))
    assert cache_folder() == tmp_path
    monkeypatch.setenv("ICING_CACHE_DIR", "")
    assert cache_folder() is None
    monkeypatch.delenv("ICING_CACHE_DIR")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    assert cache_folder() == tmp_path / "xdg" / "icing"


def test_the_workers_warm_up_runs_every_compiled_loop_on_its_invented_columns():
    """The fork server's warm-up diagnoses its columns and reads their bands, compiled.

    Its invented columns must reach the loops a grid block reaches (cloud, liquid
    targets, SLD), and the same diagnosis through numpy must agree (a check of the
    warm-up's inputs, not of physics).
    """
    pytest.importorskip("numba")
    from icing.calc.column import diagnose_columns
    from icing.runs import _warm

    cols = _warm._columns()
    diag = diagnose_columns(**cols, compiled=True)
    assert diag.cloud.any() and (diag.lwc > 0).any() and (diag.sld_class > 0).any()
    _warm.warm()  # runs again without error


def test_start_workers_gives_the_fork_server_context():
    from icing.runs.grid import start_workers

    ctx = start_workers(warm=False)
    assert ctx.get_start_method() == "forkserver"


def test_plain_pages_turns_numpy_huge_page_advice_off_and_back():
    """The grid's arrays are made without huge-page advice; the caller's setting returns."""
    mod = pytest.importorskip("numpy._core.multiarray")
    from icing.runs.grid import plain_pages

    before = mod._set_madvise_hugepage(True)
    try:
        with plain_pages():
            assert mod._set_madvise_hugepage(False) is False  # off inside
        assert mod._set_madvise_hugepage(True) is True  # restored
        with pytest.raises(RuntimeError), plain_pages():
            raise RuntimeError("a failed run")
        assert mod._set_madvise_hugepage(True) is True  # restored after a failure too
    finally:
        mod._set_madvise_hugepage(before)


def test_the_workers_are_started_without_huge_page_advice(monkeypatch):
    """The fork server (and so every worker) starts with numpy's advice off."""
    from icing.runs import grid

    assert grid._WORKER_ENVIRONMENT["NUMPY_MADVISE_HUGEPAGE"] == "0"
    monkeypatch.delenv("NUMPY_MADVISE_HUGEPAGE", raising=False)
    with grid._environment(grid._WORKER_ENVIRONMENT):
        assert os.environ["NUMPY_MADVISE_HUGEPAGE"] == "0"
    assert "NUMPY_MADVISE_HUGEPAGE" not in os.environ

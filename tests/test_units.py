"""The unit registry: built on first use, cached on disk, and built from pint's files when the cache fails."""

from __future__ import annotations

import subprocess
import sys

import pytest

from actsim import units


@pytest.fixture
def fresh_registry(monkeypatch):
    """Forget the registry of this process so the next use builds it again (restored afterwards)."""
    monkeypatch.setattr(units, "_registry", None)
    units._string_to_si.cache_clear()
    yield
    units._string_to_si.cache_clear()


def _check_conversions():
    # 1 mW/cm^2 = 10 W/m^2, 1 L/(mol cm) = 0.1 m^2/mol, 0 degC = 273.15 K: SI definitions
    # (BIPM, The International System of Units, 9th ed., 2019, tables 6 and 8).
    assert units.parse_quantity("50 mW/cm^2", field="f", kind="irradiance") == pytest.approx(500.0, rel=1e-15)
    assert units.parse_quantity("1500 L/(mol*cm)", field="f", kind="molar_absorptivity") == pytest.approx(150.0, rel=1e-15)
    assert units.parse_quantity("25 degC", field="f", kind="temperature") == pytest.approx(298.15, rel=1e-15)
    assert units.parse_dimensionless("15 %", field="f") == pytest.approx(0.15, rel=1e-15)


def test_registry_cache_is_written_and_reused(tmp_path, monkeypatch, fresh_registry):
    monkeypatch.setenv(units.CACHE_ENV, str(tmp_path))
    _check_conversions()
    cached = sorted(p.name for p in (tmp_path / "units").iterdir())
    assert any(name.endswith(".pickle") for name in cached)
    monkeypatch.setattr(units, "_registry", None)
    units._string_to_si.cache_clear()
    _check_conversions()  # now from the cache
    assert units.registry().cache_folder == tmp_path / "units"


def test_a_broken_or_unwritable_cache_falls_back_to_pint_files(tmp_path, monkeypatch, fresh_registry):
    monkeypatch.setenv(units.CACHE_ENV, str(tmp_path))
    units.registry()
    for p in (tmp_path / "units").glob("*.pickle"):
        p.write_bytes(b"not a pickle")
    monkeypatch.setattr(units, "_registry", None)
    _check_conversions()
    assert units.registry().cache_folder is None

    afile = tmp_path / "afile"
    afile.write_text("x")
    monkeypatch.setenv(units.CACHE_ENV, str(afile))  # a cache root that is a file cannot hold a folder
    assert units.unit_cache_folder() is None
    monkeypatch.setenv(units.CACHE_ENV, "")  # empty: caching off
    assert units.unit_cache_folder() is None
    monkeypatch.setattr(units, "_registry", None)
    units._string_to_si.cache_clear()
    _check_conversions()


def test_importing_the_stage_modules_does_not_import_pint():
    code = "import sys, actsim.units, actsim.tables\nprint('pint' in sys.modules)\n"
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert r.stdout.strip() == "False"

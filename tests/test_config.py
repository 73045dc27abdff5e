"""Configuration: the starter file loads as written; unknown keys and bad values are errors that
name the file, the line and the key."""

from __future__ import annotations

import os

import pytest

from screener.config import STARTER, load_config
from screener.errors import ConfigError

from .nightly import DEMO, screener


def _cfg(tmp_path, body: str) -> str:
    p = tmp_path / "c.toml"
    p.write_text(body.replace("@DEMO@", DEMO))
    return str(p)


GOOD = '[run]\nname = "t"\n[catalog]\nsources = ["@DEMO@/catalog.tle"]\n'


def test_init_config_writes_a_file_that_loads(tmp_path):
    path = tmp_path / "starter.toml"
    p = screener("init-config", str(path), "--fleet", os.path.join(DEMO, "fleet.json"),
                 "--catalog", os.path.join(DEMO, "catalog.tle"))
    assert p.returncode == 0, p.stderr
    cfg = load_config(str(path))
    assert cfg.window_days == 3.0 and cfg.thresholds.is_default
    assert "Advisory" in path.read_text() or "advisory" in path.read_text()
    p = screener("init-config", str(path))
    assert p.returncode == 2 and "exists" in p.stderr


def test_starter_text_documents_every_table():
    for table in ("[run]", "[fleet]", "[catalog]", "[volume]", "[covariance]", "[thresholds]",
                  "[events]", "[outputs]"):
        assert table in STARTER


@pytest.mark.parametrize("body,line,needle", [
    (GOOD + "[volume]\nradius_km = -1\n", 6, "volume.radius_km: must be positive"),
    (GOOD + "[volume]\nradius = 5\n", 6, "volume.radius: unknown key"),
    ('[run]\nname = "t"\nworkers = "two"\n[catalog]\nsources = ["@DEMO@/catalog.tle"]\n', 3,
     "run.workers: must be a number"),
    (GOOD + "[thresholds]\nact_pc = 1e-6\nwatch_pc = 1e-5\n", 7, "thresholds.watch_pc: must not exceed"),
    (GOOD + "[volume]\nshape = \"cube\"\n", 6, "volume.shape: must be one of"),
    (GOOD + "[volume]\nshape = \"ellipsoid\"\n", 5, "volume.ric_km: is required"),
    (GOOD + "[covariance.objects.\"X1\"]\nsigma_rtn_km = [0.1, 0.2]\n", 6, "sigma_rtn_km: must be three"),
    (GOOD + "[covariance.regimes.LOW]\nsigma_rtn_km = [0.1, 0.2, 0.3]\n", 5, "unknown key"),
    ('[run]\nname = "t"\n[catalog]\nsources = ["@DEMO@/missing.tle"]\n', 4, "no such file"),
    ('[run]\nstart = "yesterday"\n[catalog]\nsources = ["@DEMO@/catalog.tle"]\n', 2, "run.start"),
    ("[run\nname = 1\n", None, "not valid TOML"),
    ('[bogus]\nx = 1\n', 1, "bogus: unknown key"),
])
def test_bad_configuration_names_file_line_and_key(tmp_path, body, line, needle):
    path = _cfg(tmp_path, body)
    with pytest.raises(ConfigError) as exc:
        load_config(path)
    msg = str(exc.value)
    assert needle in msg
    if line is not None:
        assert msg.startswith(f"{path}:{line}:"), msg


def test_relative_paths_are_taken_from_the_config_folder(tmp_path):
    cfg = load_config(os.path.join(DEMO, "demo.toml"))
    assert cfg.catalog_sources[0] == os.path.join(DEMO, "catalog.tle")
    assert cfg.radius_m("900000001", True) == 6.5
    assert cfg.radius_m("900000004", True) == 4.0 and cfg.radius_m("Y0001", False) == 5.0

"""Shared fixtures: a real store built from the demo scenario (two runs), built once."""

from __future__ import annotations

import pytest

from .nightly import demo_store


@pytest.fixture(scope="session")
def demo_store_path(tmp_path_factory):
    return demo_store(tmp_path_factory.mktemp("demo-store"))

"""Fixtures for every test."""

from __future__ import annotations

import pytest


@pytest.fixture(autouse=True)
def backtest_cache(tmp_path_factory, monkeypatch):
    """A backtest cache folder of the test's own (planner.forecast.backtest_cache), so that
    tests never read or fill the user's cache and never depend on each other."""
    folder = tmp_path_factory.mktemp("planner-cache")
    monkeypatch.setenv("PLANNER_CACHE", str(folder))
    return folder

"""Shared test set-up: installed rule packs never leak into the tests."""

from __future__ import annotations

import pytest

from caselint.engine.plugins import DISABLE_AUTOLOAD_ENV


@pytest.fixture(autouse=True)
def _no_installed_packs(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv(DISABLE_AUTOLOAD_ENV, "1")

"""Shared test set-up: installed rule packs never leak into the tests, and the tests never
read or write the user's mesh cache.

Autoloading of installed packs is switched off when this file is imported, before any test
module is collected: test modules build plugin managers at collection time (to
parametrise over the registered rules), and an installed pack must not add rules there.
"""

from __future__ import annotations

import os

import pytest

from caselint.cachedir import ENV_DIR as CACHE_DIR_ENV
from caselint.engine.plugins import DISABLE_AUTOLOAD_ENV

os.environ[DISABLE_AUTOLOAD_ENV] = "1"


@pytest.fixture(autouse=True)
def _no_installed_packs(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv(DISABLE_AUTOLOAD_ENV, "1")


@pytest.fixture(autouse=True)
def _private_cache(monkeypatch: pytest.MonkeyPatch, tmp_path_factory: pytest.TempPathFactory) -> None:
    monkeypatch.setenv(CACHE_DIR_ENV, str(tmp_path_factory.getbasetemp() / "mesh-cache"))


@pytest.fixture(params=["numpy", "numba"])
def kernel_mode(request: pytest.FixtureRequest, monkeypatch: pytest.MonkeyPatch) -> str:
    """Run a test with the numpy reference kernels and again with the compiled ones
    (``CASELINT_KERNELS``; the compiled run is skipped where numba is not installed)."""
    if request.param == "numba":
        pytest.importorskip("numba")
    monkeypatch.setenv("CASELINT_KERNELS", request.param)
    return request.param

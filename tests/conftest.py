"""Test-suite wide settings.

Every test run gets a private result store in a temporary folder, so the
suite never writes to the checkout's ``store/`` folder nor reads results a
previous run left there.  Tests of the location rule override this with
``monkeypatch``.
"""

from __future__ import annotations

import os
import shutil
import tempfile

_STORE_DIR = None


def pytest_configure(config):
    global _STORE_DIR
    if "ENUMERATOR_STORE" not in os.environ:
        _STORE_DIR = tempfile.mkdtemp(prefix="enumerator-test-store-")
        os.environ["ENUMERATOR_STORE"] = os.path.join(_STORE_DIR, "results.sqlite")


def pytest_unconfigure(config):
    if _STORE_DIR is not None:
        os.environ.pop("ENUMERATOR_STORE", None)
        shutil.rmtree(_STORE_DIR, ignore_errors=True)

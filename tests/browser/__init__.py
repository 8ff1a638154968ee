"""Tests in a real browser (headless Chromium through Selenium).

The folder is a package so that its conftest.py is imported as ``browser.conftest`` and never takes
the place of ``tests/conftest.py``, which the other folders import as ``conftest``.
"""

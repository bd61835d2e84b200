"""Reports write PDFs: keep them in a temporary MEDIA_ROOT, and draw charts in-process."""

from __future__ import annotations

import pytest


@pytest.fixture(autouse=True)
def _report_files(settings, tmp_path):
    settings.MEDIA_ROOT = tmp_path / "media"
    settings.RIMEWATCH_REPORT_CHART_WORKERS = 1
    settings.RIMEWATCH_DISPLAY_UNITS = "us"

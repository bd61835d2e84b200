"""Production settings pass Django's deployment checklist without a warning."""

from __future__ import annotations

import os
import secrets
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def test_check_deploy_has_no_warnings(tmp_path):
    """`manage.py check --deploy` with DEBUG=0, a real SECRET_KEY and a host: no issues, so
    secure cookies, HSTS, SSL redirect and the rest are on (fails on any warning)."""
    env = {
        **os.environ,
        "DJANGO_SETTINGS_MODULE": "config.settings",
        "DEBUG": "0",
        "SECRET_KEY": secrets.token_urlsafe(60),
        "ALLOWED_HOSTS": "rimewatch.example.com",
        "RIMEWATCH_VAR_DIR": str(tmp_path),
    }
    env.pop("DJANGO_ALLOW_ASYNC_UNSAFE", None)  # a test-only escape hatch, never in deployment
    result = subprocess.run(
        [sys.executable, "manage.py", "check", "--deploy", "--fail-level", "WARNING"],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert result.returncode == 0, result.stdout + result.stderr
    assert "no issues" in result.stdout

"""The technician's app on a first load over a slow mobile network: bytes transferred and
time to interactive, in headless chromium (Debian's, as the browser tests use).

Serves Rimewatch as production does (collectstatic's hashed, compressed files through
WhiteNoise) on 127.0.0.1 from a throwaway SQLite database, then opens /field/ in a fresh
browser profile with the network shaped as a slow 4G link (150 ms round trip, 1.6 Mbit/s
down, 750 kbit/s up, as Lighthouse's mobile profile) and the CPU slowed four times (a
mid-range phone). Prints, for the median of ``--runs`` cold loads:

- transferred: the bytes on the wire (headers and compressed bodies) of every response the
  page loads, the shell, its modules, style and icon (the service worker's copies of the
  same files, made after the page is drawn, come from the browser's cache);
- interactive: from navigation to the sign-in form drawn by the app's script (the modules
  loaded and run, the form's handlers attached);
- and the time from signing in to the day's screen with one visit (its API answers pass
  through the service worker, so their bytes are not counted here);
- side by side, the floor: the office's sign-in page (server-rendered HTML and one style
  sheet, no script) loaded the same way, to its username field; the ratio says what the
  app's modules cost over the least a page of Rimewatch costs on the same link.

Goals (issue 16): under 300 KB transferred and under 2 s to interactive.

    .venv/bin/python bench/field_app.py [--runs 5]
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from bench._db import setup_database

CHROMIUM = "/usr/bin/chromium"
SLOW_4G = {
    "offline": False,
    "latency": 150,
    "downloadThroughput": 1.6 * 1024 * 1024 / 8,
    "uploadThroughput": 750 * 1024 / 8,
}
CPU_SLOWDOWN = 4
PASSWORD = "bench-pass-123"


def serve(tmp: Path) -> tuple[str, object]:
    """Collect the static files and serve them through WhiteNoise, as under gunicorn."""
    from django.conf import settings
    from django.core.management import call_command
    from django.test.testcases import LiveServerThread

    settings.STATIC_ROOT = tmp / "static"
    call_command("collectstatic", interactive=False, verbosity=0)
    thread = LiveServerThread("127.0.0.1", static_handler=lambda app: app)
    thread.daemon = True
    thread.start()
    thread.is_ready.wait()
    if thread.error:
        raise thread.error
    return f"http://127.0.0.1:{thread.port}", thread


def people() -> None:
    """One technician with one visit today, so the signed-in screen has something to show."""
    from datetime import timedelta

    from django.utils import timezone

    from tests.factories import (
        SiteFactory,
        UnitFactory,
        UserFactory,
        VisitFactory,
        VisitUnitFactory,
    )

    tech = UserFactory(username="bench.tech", role="technician")
    tech.set_password(PASSWORD)
    tech.save()
    site = SiteFactory(name="Bench Deli")
    now = timezone.now()
    visit = VisitFactory(
        site=site,
        status="scheduled",
        window_start=now - timedelta(hours=1),
        window_end=now + timedelta(hours=2),
        technicians=[tech],
    )
    VisitUnitFactory(visit=visit, unit=UnitFactory(site=site, tag="B-1"))


def cold_page(browser: Any, base: str, path: str) -> tuple[Any, Any, float, float]:
    """A fresh profile on the slow link and CPU, opened at ``path`` until its username field
    is drawn: the page, its context, the seconds and the bytes transferred."""
    context = browser.new_context(viewport={"width": 390, "height": 844})
    page = context.new_page()
    cdp = context.new_cdp_session(page)
    cdp.send("Network.enable")
    cdp.send("Network.emulateNetworkConditions", SLOW_4G)
    cdp.send("Emulation.setCPUThrottlingRate", {"rate": CPU_SLOWDOWN})
    sizes: list[float] = []
    cdp.on("Network.loadingFinished", lambda e: sizes.append(e["encodedDataLength"]))
    started = time.perf_counter()
    page.goto(f"{base}{path}", wait_until="commit")
    page.get_by_label("Username").wait_for()
    return page, context, time.perf_counter() - started, sum(sizes)


def floor_load(browser, base: str) -> dict[str, float]:
    _page, context, seconds, transferred = cold_page(browser, base, "/accounts/login/")
    context.close()
    return {"floor_kb": transferred / 1024, "floor_s": seconds}


def one_load(browser, base: str) -> dict[str, float]:
    page, context, interactive, first_bytes = cold_page(browser, base, "/field/")

    page.get_by_label("Username").fill("bench.tech")
    page.get_by_label("Password").fill(PASSWORD)
    started = time.perf_counter()
    page.get_by_role("button", name="Sign in").click()
    page.get_by_role("link", name="Bench Deli").wait_for()
    day = time.perf_counter() - started
    context.close()
    return {"first_kb": first_bytes / 1024, "interactive_s": interactive, "day_s": day}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=5)
    args = parser.parse_args()
    from playwright.sync_api import sync_playwright

    with tempfile.TemporaryDirectory(prefix="rimewatch-bench-field-") as folder:
        tmp = Path(folder)
        setup_database(tmp)
        people()
        base, thread = serve(tmp)
        try:
            with sync_playwright() as p:
                browser = p.chromium.launch(
                    executable_path=CHROMIUM, headless=True, args=["--no-sandbox"]
                )
                # App and floor in turn, so both meet the same moments of the machine.
                runs = [
                    {**one_load(browser, base), **floor_load(browser, base)}
                    for _ in range(args.runs)
                ]
                browser.close()
        finally:
            thread.terminate()

    def median(key: str) -> float:
        return statistics.median(r[key] for r in runs)

    print(f"Rimewatch Field, first load over slow 4G with a 4x slower CPU ({args.runs} runs)")
    print(f"  transferred      {median('first_kb'):7.1f} KB   (goal: under 300 KB)")
    print(f"  interactive      {median('interactive_s'):7.2f} s    (goal: under 2 s)")
    print(f"  sign-in to day   {median('day_s'):7.2f} s")
    print("  floor, the office's sign-in page on the same link:")
    print(
        f"    transferred    {median('floor_kb'):7.1f} KB   "
        f"(app {median('first_kb') / median('floor_kb'):.1f}x)"
    )
    print(
        f"    interactive    {median('floor_s'):7.2f} s    "
        f"(app {median('interactive_s') / median('floor_s'):.2f}x)"
    )
    ok = median("first_kb") < 300 and median("interactive_s") < 2
    print("  goals met" if ok else "  GOALS MISSED")


if __name__ == "__main__":
    main()

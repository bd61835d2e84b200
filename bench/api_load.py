"""Load on the reading-set endpoint, against the floor of a bare DRF create, in one run.

Serves the API with gunicorn (2 sync workers, config/gunicorn.conf.py) on 127.0.0.1 against
a throwaway PostgreSQL (scripts/with-postgres.sh), then has concurrent clients (asyncio +
httpx) post reading sets
with technicians' tokens for a bounded time, re-sending 10 % of the accepted ones as a phone
would after a dropped answer; beside it the floor: a minimal DRF create of a row of the
same shape (no authentication, no throttling, no diagnosis, no audit) served the same way
and loaded the same way. The two are loaded in turns (``--rounds``), so a change in what
else the machine runs falls on both alike. A closed loop of clients keeps both saturated:
two clients per worker, so each worker has the next request waiting as it answers one.
More clients add no throughput, only queue in front of the workers (latency grows as
clients / rate: with 8, the API answered at the same rate with twice the latency); fewer
leave a worker idle between requests. The API is then also paced at half the rate it
reached, new posts arriving at random, for the latency at a working load. Prints
requests/s, median and p99 latency for each, the ratios, and the count check: rows stored
== distinct client_ids accepted, and no duplicates. Where /proc tells, it also prints the
CPU the gunicorn workers spent per request: on a machine shared with other work the rates
move with the neighbours' load, the CPU per request much less.

    .venv/bin/python bench/api_load.py [--seconds 8] [--clients 4] [--rounds 4]

Traffic goes to 127.0.0.1 only and stops by itself. The write throttle's rate is raised
for the run (its counting still runs) so it does not cap the measurement.
"""

from __future__ import annotations

import argparse
import asyncio
import gc
import os
import random
import secrets
import socket
import statistics
import subprocess
import sys
import time
import uuid
from dataclasses import dataclass, field
from datetime import timedelta
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
RETRY_SHARE = 0.10
TECHNICIANS = 8
#: gunicorn workers, for the API and the floor alike (the speed goals are set for two).
WORKERS = 2


# --- the floor: served by gunicorn as 'api_load:floor_application()' ----------------------


def floor_application():
    """A WSGI app whose only URL is a bare DRF create of a ReadingSet row."""
    import django

    django.setup()
    from django.conf import settings
    from django.core.wsgi import get_wsgi_application
    from django.urls import path
    from rest_framework import generics, serializers

    from fleet.models import ReadingSet

    class FloorSerializer(serializers.ModelSerializer):
        class Meta:
            model = ReadingSet
            fields = [
                "id",
                "visit_unit",
                "client_id",
                "taken_at",
                "stage",
                "box_temp_c",
                "entering_air_temp_c",
                "suction_kpa_gauge",
                "suction_line_temp_c",
                "head_kpa_gauge",
                "liquid_line_temp_c",
                "compressor_amps_1",
                "supply_volts_1",
                "sight_glass",
            ]

    class FloorCreate(generics.CreateAPIView):
        serializer_class = FloorSerializer
        authentication_classes: list = []
        permission_classes: list = []
        throttle_classes: list = []

    global urlpatterns
    urlpatterns = [path("floor/", FloorCreate.as_view())]
    settings.ROOT_URLCONF = __name__
    return get_wsgi_application()


urlpatterns: list = []


# --- the run --------------------------------------------------------------------------------


def _env() -> dict[str, str]:
    return {
        **os.environ,
        "DJANGO_SETTINGS_MODULE": "config.settings",
        "DEBUG": "0",
        "SECRET_KEY": os.environ.get("SECRET_KEY") or secrets.token_urlsafe(50),
        "ALLOWED_HOSTS": "127.0.0.1",
        "SECURE_SSL_REDIRECT": "0",
        "RIMEWATCH_WRITE_RATE": "100000000/minute",
        "LOG_LEVEL": "WARNING",
        "PYTHONPATH": os.pathsep.join([str(ROOT), str(ROOT / "bench")]),
    }


@dataclass(frozen=True)
class Phone:
    token: str
    visit_id: int
    unit_id: int
    visit_unit_id: int


def seed() -> list[Phone]:
    """Technicians with tokens, each on an in-progress visit with one R-404A unit."""
    import django

    django.setup()
    from django.contrib.auth.models import Group, User
    from django.utils import timezone
    from rest_framework.authtoken.models import Token

    from fleet.models import Customer, Refrigerant, Site, Unit, Visit, VisitUnit

    customer = Customer.objects.create(name="Bench customer")
    site = Site.objects.create(customer=customer, name="Bench site", elevation_m=200.0)
    r404a = Refrigerant.objects.get(designation="R-404A")
    group = Group.objects.get(name="technician")
    now = timezone.now()
    phones = []
    for n in range(TECHNICIANS):
        user = User.objects.create_user(f"bench-tech-{n}", password=secrets.token_urlsafe(12))
        user.groups.add(group)
        unit = Unit.objects.create(
            site=site,
            tag=f"BENCH-{n}",
            application="medium_temp",
            refrigerant=r404a,
            full_charge_kg=10.0,
            metering_device="txv",
            design_box_temp_c=2.0,
            design_evap_td_k=5.5,
            design_condenser_split_k=11.0,
            nameplate_volts=230,
            phase=1,
            rla_a=10.0,
            lra_a=60.0,
        )
        visit = Visit.objects.create(
            reference=f"BENCH-{n}",
            site=site,
            kind="planned",
            status="in_progress",
            window_start=now,
            window_end=now + timedelta(hours=8),
        )
        visit.technicians.add(user)
        visit_unit = VisitUnit.objects.create(visit=visit, unit=unit)
        token = Token.objects.create(user=user)
        phones.append(Phone(token.key, visit.pk, unit.pk, visit_unit.pk))
    return phones


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _serve(app: str, port: int) -> subprocess.Popen:
    return subprocess.Popen(
        [
            sys.executable,
            "-m",
            "gunicorn",
            "--config",
            str(ROOT / "config" / "gunicorn.conf.py"),
            app,
            "--workers",
            str(WORKERS),
            "--bind",
            f"127.0.0.1:{port}",
            "--log-level",
            "warning",
        ],
        cwd=ROOT,
        env=_env(),
    )


def _wait_until_up(port: int, path: str, headers: dict[str, str]) -> None:
    import httpx

    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        try:
            httpx.options(f"http://127.0.0.1:{port}{path}", headers=headers, timeout=2)
            return
        except httpx.TransportError:
            time.sleep(0.2)
    raise RuntimeError(f"server on port {port} did not come up")


@dataclass
class Tally:
    latencies: list[float] = field(default_factory=list)
    statuses: dict[int, int] = field(default_factory=dict)
    accepted: set[str] = field(default_factory=set)
    retries: int = 0
    retried_same_id: int = 0
    elapsed: float = 0.0
    #: CPU seconds the server's workers spent on the measured load (None: unknown).
    server_cpu: float | None = None


def _reading(phone: Phone, client_id: str) -> dict:
    """Synthetic as-found readings in US units (a healthy R-404A cooler, with scatter)."""
    jitter = random.uniform(-1.5, 1.5)
    return {
        "unit": phone.unit_id,
        "client_id": client_id,
        "stage": "as_found",
        "units": {"temperature": "F", "pressure": "psig"},
        "box_temp": 36.0 + jitter,
        "entering_air_temp": 85.0 + jitter,
        "suction_pressure": 62.0 + jitter,
        "suction_line_temp": 35.0 + jitter,
        "head_pressure": 235.0 + 2 * jitter,
        "liquid_line_temp": 95.0 + jitter,
        "compressor_amps": [8.1],
        "supply_volts": [231.0],
        "sight_glass": "clear",
    }


def _floor_row(phone: Phone, client_id: str) -> dict:
    """The same reading as a bare row, already in SI."""
    return {
        "visit_unit": phone.visit_unit_id,
        "client_id": client_id,
        "taken_at": "2026-01-01T12:00:00Z",
        "stage": "as_found",
        "box_temp_c": 2.2,
        "entering_air_temp_c": 29.4,
        "suction_kpa_gauge": 427.5,
        "suction_line_temp_c": 1.7,
        "head_kpa_gauge": 1620.3,
        "liquid_line_temp_c": 35.0,
        "compressor_amps_1": 8.1,
        "supply_volts_1": 231.0,
        "sight_glass": "clear",
    }


async def _load(port: int, phones: list[Phone], clients: int, seconds: float, floor: bool) -> Tally:
    import httpx

    tally = Tally()
    accepted_by_phone: dict[int, list[tuple[str, dict, int]]] = {i: [] for i in range(len(phones))}
    rng = random.Random(20261202)
    stop_at = time.monotonic() + seconds

    async def client(n: int, http: httpx.AsyncClient) -> None:
        index = n % len(phones)
        phone = phones[index]
        headers = {} if floor else {"Authorization": f"Token {phone.token}"}
        url = "/floor/" if floor else f"/api/v1/visits/{phone.visit_id}/reading-sets/"
        while time.monotonic() < stop_at:
            earlier = accepted_by_phone[index]
            retry = not floor and earlier and rng.random() < RETRY_SHARE
            if retry:
                client_id, body, first_id = rng.choice(earlier)
            else:
                client_id = str(uuid.uuid4())
                body = _floor_row(phone, client_id) if floor else _reading(phone, client_id)
            started = time.perf_counter()
            response = await http.post(url, json=body, headers=headers)
            tally.latencies.append(time.perf_counter() - started)
            tally.statuses[response.status_code] = tally.statuses.get(response.status_code, 0) + 1
            if response.status_code in (200, 201):
                tally.accepted.add(client_id)
                if retry:
                    tally.retries += 1
                    tally.retried_same_id += response.json()["id"] == first_id
                elif not floor:
                    earlier.append((client_id, body, response.json()["id"]))

    limits = httpx.Limits(max_connections=clients, max_keepalive_connections=clients)
    async with httpx.AsyncClient(
        base_url=f"http://127.0.0.1:{port}", limits=limits, timeout=30
    ) as http:
        began = time.perf_counter()
        await asyncio.gather(*(client(n, http) for n in range(clients)))
        tally.elapsed = time.perf_counter() - began
    return tally


async def _paced(port: int, phones: list[Phone], rate: float, seconds: float) -> Tally:
    """New reading sets arriving at ``rate`` a second (Poisson), each sent when it arrives
    whatever is still in flight: the latency a technician sees at that load, without the
    queue a saturating closed loop of clients builds by itself."""
    import httpx

    tally = Tally()
    rng = random.Random(20261203)
    limits = httpx.Limits(max_connections=64, max_keepalive_connections=64)

    async def post(phone: Phone, http: httpx.AsyncClient) -> None:
        client_id = str(uuid.uuid4())
        started = time.perf_counter()
        response = await http.post(
            f"/api/v1/visits/{phone.visit_id}/reading-sets/",
            json=_reading(phone, client_id),
            headers={"Authorization": f"Token {phone.token}"},
        )
        tally.latencies.append(time.perf_counter() - started)
        tally.statuses[response.status_code] = tally.statuses.get(response.status_code, 0) + 1
        if response.status_code in (200, 201):
            tally.accepted.add(client_id)

    async with httpx.AsyncClient(
        base_url=f"http://127.0.0.1:{port}", limits=limits, timeout=30
    ) as http:
        began = arrival = time.perf_counter()
        sent: list[asyncio.Task] = []
        while arrival - began < seconds:
            await asyncio.sleep(max(0.0, arrival - time.perf_counter()))
            sent.append(asyncio.create_task(post(phones[len(sent) % len(phones)], http)))
            arrival += rng.expovariate(rate)
        await asyncio.gather(*sent)
        tally.elapsed = time.perf_counter() - began
    return tally


def _workers_cpu_seconds(master_pid: int) -> float | None:
    """CPU time (user + system) the gunicorn workers of ``master_pid`` have used so far;
    None where /proc cannot tell (not Linux)."""
    ticks = os.sysconf("SC_CLK_TCK") if hasattr(os, "sysconf") else 100
    total = 0
    try:
        names = os.listdir("/proc")
    except OSError:
        return None
    for name in names:
        if not name.isdigit():
            continue
        try:
            with open(f"/proc/{name}/stat") as f:
                fields = f.read().rsplit(")", 1)[1].split()
        except OSError:
            continue
        # after the command: state, ppid, ... utime (14th field overall), stime (15th)
        if int(fields[1]) == master_pid:
            total += int(fields[11]) + int(fields[12])
    return total / ticks


def _merge(into: Tally, part: Tally) -> None:
    into.latencies += part.latencies
    for code, n in part.statuses.items():
        into.statuses[code] = into.statuses.get(code, 0) + n
    into.accepted |= part.accepted
    into.retries += part.retries
    into.retried_same_id += part.retried_same_id
    into.elapsed += part.elapsed
    if part.server_cpu is None or into.server_cpu is None:
        into.server_cpu = None  # unknown for one turn: unknown in all
    else:
        into.server_cpu += part.server_cpu


class _Target:
    """One server under test: its gunicorn, where to post, and whether it is the floor."""

    def __init__(self, app: str, path: str, phones: list[Phone], floor: bool) -> None:
        self.port, self.floor, self.phones = _free_port(), floor, phones
        self.server = _serve(app, self.port)
        headers = {} if floor else {"Authorization": f"Token {phones[0].token}"}
        _wait_until_up(self.port, path, headers)

    def load(self, clients: int, seconds: float) -> Tally:
        before = _workers_cpu_seconds(self.server.pid)
        tally = asyncio.run(_load(self.port, self.phones, clients, seconds, self.floor))
        after = _workers_cpu_seconds(self.server.pid)
        if before is not None and after is not None:
            tally.server_cpu = after - before
        return tally

    def stop(self) -> None:
        self.server.terminate()
        self.server.wait(timeout=30)


def _run(phones: list[Phone], clients: int, seconds: float, rounds: int) -> tuple[Tally, ...]:
    """Warm-up, then API and floor loaded in turn, ``rounds`` times each for ``seconds`` in
    all: whatever else the machine does drifts over both alike; then the API paced at half
    the rate it reached. Returns the API's warm-up tally (its posts are stored too), the
    API's, the floor's and the paced one."""
    api = _Target("config.wsgi:application", "/api/v1/", phones, floor=False)
    floor = _Target("api_load:floor_application()", "/floor/", phones, floor=True)
    try:
        warm = api.load(clients, 2.0)  # workers load code and saturation tables
        floor.load(clients, 2.0)
        totals = Tally(server_cpu=0.0), Tally(server_cpu=0.0)
        for _ in range(rounds):
            for total, target in zip(totals, (api, floor), strict=True):
                _merge(total, target.load(clients, seconds / rounds))
        half = 0.5 * len(totals[0].latencies) / totals[0].elapsed
        paced = asyncio.run(_paced(api.port, phones, half, seconds))
        return (warm, *totals, paced)
    finally:
        api.stop()
        floor.stop()


def _server_cpu_ms(tally: Tally) -> float | None:
    """Server CPU per request, ms: steadier than rates on a machine others are using."""
    if tally.server_cpu is None or not tally.latencies:
        return None
    return tally.server_cpu * 1000 / len(tally.latencies)


def _summary(name: str, tally: Tally) -> tuple[float, float, float]:
    rate = len(tally.latencies) / tally.elapsed
    median = statistics.median(tally.latencies) * 1000
    p99 = statistics.quantiles(tally.latencies, n=100)[98] * 1000
    codes = ", ".join(f"{code}: {n}" for code, n in sorted(tally.statuses.items()))
    cpu = _server_cpu_ms(tally)
    cpu_text = "" if cpu is None else f"   server CPU {cpu:5.1f} ms/req"
    print(
        f"{name:<28} {rate:8.1f} req/s   median {median:7.1f} ms   p99 {p99:7.1f} ms"
        f"{cpu_text}   ({codes})"
    )
    return rate, median, p99


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seconds", type=float, default=8.0)
    parser.add_argument(
        "--clients", type=int, default=2 * WORKERS, help="concurrent clients (two per worker)"
    )
    parser.add_argument("--rounds", type=int, default=4, help="turns of API and floor")
    args = parser.parse_args()
    if not os.environ.get("DATABASE_URL", "").startswith("postgres"):
        # Re-run inside a throwaway PostgreSQL cluster (the script says so if it is missing).
        script = ROOT / "scripts" / "with-postgres.sh"
        os.execvp("bash", ["bash", str(script), sys.executable, __file__, *sys.argv[1:]])
    os.environ.update(_env())
    sys.path.insert(0, str(ROOT))
    subprocess.run(
        [sys.executable, "manage.py", "migrate", "--no-input", "-v", "0"],
        cwd=ROOT,
        env=_env(),
        check=True,
    )
    phones = seed()
    # This process has Django and the app loaded to seed and check; a full collection of
    # all that while clients wait (about 100 ms) would be counted as the servers' latency.
    gc.collect()
    gc.freeze()
    print(
        f"API load: {args.clients} clients, {args.seconds:g} s each in {args.rounds} turns, "
        f"gunicorn {WORKERS} workers, PostgreSQL; {RETRY_SHARE:.0%} of the API posts are retries"
    )
    api_warm, api, floor, paced = _run(phones, args.clients, args.seconds, args.rounds)
    api_rate, api_median, api_p99 = _summary("reading sets (full API)", api)
    floor_rate, floor_median, floor_p99 = _summary("floor (bare DRF create)", floor)
    _summary("API paced at half its rate", paced)
    api_cpu, floor_cpu = _server_cpu_ms(api), _server_cpu_ms(floor)
    cpu_ratio = ""
    if api_cpu is not None and floor_cpu:
        cpu_ratio = f", server CPU {api_cpu / floor_cpu:.1f}x"
    print(
        f"ratio API / floor: throughput {api_rate / floor_rate:.2f}x, "
        f"median latency {api_median / floor_median:.1f}x, p99 {api_p99 / floor_p99:.1f}x"
        f"{cpu_ratio}"
    )

    from django.db.models import Count

    from fleet.models import ReadingSet

    bench_rows = ReadingSet.objects.filter(visit_unit__visit__reference__startswith="BENCH-")
    api_ids = {
        str(c)
        for c in bench_rows.filter(created_by__isnull=False).values_list("client_id", flat=True)
    }
    duplicates = (
        ReadingSet.objects.values("client_id").annotate(n=Count("id")).filter(n__gt=1).count()
    )
    accepted = api_warm.accepted | api.accepted | paced.accepted  # all of them are stored
    stored = bench_rows.filter(created_by__isnull=False).count()
    ok = stored == len(accepted) and api_ids == accepted and duplicates == 0
    print(
        f"count check: rows stored {stored}, distinct client_ids accepted {len(accepted)}, "
        f"duplicates {duplicates}; retries {api.retries + api_warm.retries} "
        f"({api.retried_same_id + api_warm.retried_same_id} answered with the stored record): "
        f"{'OK' if ok else 'MISMATCH'}"
    )
    if not ok or api.retried_same_id != api.retries:
        sys.exit(1)


if __name__ == "__main__":
    main()

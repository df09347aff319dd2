"""Load test: a working day's traffic against a running register, bounded in requests and time.

A bounded asyncio loop over httpx rather than Locust: the test needs a fixed budget of
requests and seconds, exact per-route percentiles and a lost-update check at the end, all of
which a plain loop gives in one readable file; Locust would bring gevent, a web UI and its own
statistics (which bucket latencies) into the dependencies for none of that.

Against a server already running (see DEVELOPERS.md, "Load test": gunicorn with 4 workers on
PostgreSQL over the campus of bench/grow_campus.py), ``--users`` virtual users (default 20)
send requests back to back (or pausing about ``--think`` seconds between them, as people do) until ``--requests`` have been sent or ``--duration`` seconds have
passed, whichever comes first:

- inspectors page the register (``/lasers/?page=N``) and the API's laser list;
- researchers open laser pages and preview a registration (the page's "Preview", which
  evaluates the emission and sets it against the room, saving nothing);
- the LSO opens their home page;
- a laser user calls ``POST /api/v1/evaluate/``;
- three editors change the description of the same two lasers at once through the API, each
  reading the laser and its ETag and sending the change with If-Match, reading again after a
  412. Every change answered 200 must be in the final description: one that is not is a
  lost update.

It signs in with the demo accounts (``<username>-demo`` passwords, set by grow_campus) and
keeps the cookies itself, since a production server marks them Secure and the test speaks
plain HTTP. It prints requests per second, p50/p95/p99 and statuses per route, errors (5xx,
other unexpected statuses, transport failures) and lost updates, and exits 1 if there was any
error or lost update.

Run from the project root: ``python bench/load.py --base-url http://127.0.0.1:8000``.
"""
from __future__ import annotations

import argparse
import asyncio
import random
import re
import statistics
import sys
import time
from collections import Counter, defaultdict
from dataclasses import dataclass, field

import httpx

REGISTER_PAGE_SIZE = 50
# Laser ids for the researchers' page views: drawn from this many API pages of 200 at start-up.
ID_POOL_PAGES = 5
EDITORS = 3
EDITED_LASERS = 2
# What the other users do, with weights: a working day's mix, mostly reading.
MIX = {
    "register page": 22,
    "laser list (API)": 22,
    "laser page": 20,
    "registration preview": 8,
    "LSO home": 8,
    "evaluate (API)": 20,
}


@dataclass
class Stats:
    started: float = field(default_factory=time.perf_counter)
    latencies: dict[str, list[float]] = field(default_factory=lambda: defaultdict(list))
    statuses: dict[str, Counter[int]] = field(default_factory=lambda: defaultdict(Counter))
    errors: list[str] = field(default_factory=list)
    sent: int = 0


class Account:
    """A signed-in session (cookies kept by hand) or an API token."""

    def __init__(self, client: httpx.AsyncClient) -> None:
        self.client = client
        self.cookies: dict[str, str] = {}
        self.token = ""

    def headers(self, extra: dict[str, str] | None = None) -> dict[str, str]:
        headers = dict(extra or {})
        if self.cookies:
            headers["Cookie"] = "; ".join(f"{name}={value}" for name, value in self.cookies.items())
        if self.token:
            headers["Authorization"] = f"Token {self.token}"
        return headers

    def keep_cookies(self, response: httpx.Response) -> None:
        for header in response.headers.get_list("set-cookie"):
            name, _, rest = header.partition("=")
            self.cookies[name.strip()] = rest.split(";", 1)[0]

    async def sign_in_session(self, username: str) -> None:
        form = await self.client.get("/login/")
        self.keep_cookies(form)
        answer = await self.client.post("/login/", headers=self.headers(), data={
            "username": username, "password": f"{username}-demo", "csrfmiddlewaretoken": _csrf(form.text)})
        self.keep_cookies(answer)
        if answer.status_code != 302 or "sessionid" not in self.cookies:
            raise SystemExit(f"cannot sign in as {username} ({answer.status_code}); was bench/grow_campus.py run?")

    async def sign_in_token(self, username: str) -> None:
        answer = await self.client.post("/api/v1/auth/token/",
                                        json={"username": username, "password": f"{username}-demo"})
        if answer.status_code != 200:
            raise SystemExit(f"cannot get a token for {username}: {answer.status_code} {answer.text[:200]}")
        self.token = answer.json()["token"]


def _csrf(html: str) -> str:
    match = re.search(r'name="csrfmiddlewaretoken" value="([^"]+)"', html)
    if match is None:
        raise SystemExit("no CSRF token in the form")
    return match.group(1)


class Load:
    def __init__(self, client: httpx.AsyncClient, *, budget: int, deadline: float, seed: int) -> None:
        self.client = client
        self.budget = budget
        self.deadline = deadline
        self.random = random.Random(seed)
        self.stats = Stats()
        self.accounts: dict[str, Account] = {}
        self.laser_ids: list[int] = []
        self.register_pages = 1
        self.location_id = ""
        self.acknowledged: dict[int, list[str]] = defaultdict(list)
        self.without: set[str] = set()
        self.think = 0.0

    def running(self) -> bool:
        return self.stats.sent < self.budget and time.perf_counter() < self.deadline

    async def request(self, route: str, method: str, url: str, *, account: Account, expected: tuple[int, ...] = (200,),
                      headers: dict[str, str] | None = None, **kwargs: object) -> httpx.Response | None:
        self.stats.sent += 1
        started = time.perf_counter()
        try:
            response = await self.client.request(method, url, headers=account.headers(headers), **kwargs)  # type: ignore[arg-type]
        except httpx.HTTPError as error:
            self.stats.errors.append(f"{route}: {type(error).__name__}: {error}")
            return None
        self.stats.latencies[route].append(time.perf_counter() - started)
        self.stats.statuses[route][response.status_code] += 1
        if response.status_code not in expected:
            self.stats.errors.append(f"{route}: {method} {url} answered {response.status_code}")
        return response

    # --- start-up: sign-ins and the data the users pick from (not counted) --------------------

    async def prepare(self) -> None:
        for name in ("inspector", "researcher", "lso"):
            account = self.accounts[f"{name} session"] = Account(self.client)
            await account.sign_in_session(name)
        for name in ("inspector", "user", "lso"):
            account = self.accounts[f"{name} token"] = Account(self.client)
            await account.sign_in_token(name)
        lso = self.accounts["lso token"]
        first = (await self.client.get("/api/v1/lasers/?page_size=200", headers=lso.headers())).json()
        pages = -(-first["count"] // 200)
        self.register_pages = -(-first["count"] // REGISTER_PAGE_SIZE)
        listed = list(first["results"])
        for page in self.random.sample(range(2, pages + 1), min(ID_POOL_PAGES - 1, pages - 1)):
            answer = await self.client.get(f"/api/v1/lasers/?page_size=200&page={page}", headers=lso.headers())
            listed += answer.json()["results"]
        self.laser_ids = [laser["id"] for laser in listed]
        self.edited = [laser["id"] for laser in listed if laser["status"] == "active"][:EDITED_LASERS]
        form = await self.client.get("/lasers/new/", headers=self.accounts["researcher session"].headers())
        select = re.search(r'name="location".*?</select>', form.text, re.S)
        options = re.findall(r'<option value="(\d+)"', select.group(0) if select else "")
        if not options or len(self.edited) < EDITED_LASERS:
            raise SystemExit("the register has no room or too few active lasers; run bench/grow_campus.py")
        self.location_id = options[0]
        self.preview_csrf = _csrf(form.text)
        print(f"register: {first['count']} lasers ({self.register_pages} register pages); "
              f"editing lasers {self.edited}", flush=True)

    # --- what the users do --------------------------------------------------------------------

    async def act(self, route: str) -> None:
        pick = self.random
        if route == "register page":
            await self.request(route, "GET", f"/lasers/?page={pick.randint(1, self.register_pages)}",
                               account=self.accounts["inspector session"])
        elif route == "laser list (API)":
            await self.request(route, "GET", f"/api/v1/lasers/?page={pick.randint(1, self.register_pages)}",
                               account=self.accounts["inspector token"])
        elif route == "laser page":
            await self.request(route, "GET", f"/lasers/{pick.choice(self.laser_ids)}/",
                               account=self.accounts["researcher session"])
        elif route == "registration preview":
            await self.request(route, "POST", "/lasers/new/", account=self.accounts["researcher session"], data={
                "csrfmiddlewaretoken": self.preview_csrf, "laser_type": "diode", "labelled_class": "3B",
                "location": self.location_id, "emissions-TOTAL_FORMS": "1", "emissions-INITIAL_FORMS": "0",
                "emissions-MIN_NUM_FORMS": "1", "emissions-MAX_NUM_FORMS": "12",
                "emissions-0-wavelength_m": f"{pick.choice([405, 450, 520, 635, 808, 980])} nm",
                "emissions-0-temporal_mode": "cw", "emissions-0-average_power_W": f"{pick.randint(10, 400)} mW",
                "emissions-0-beam_diameter_m": "1.5 mm", "emissions-0-diameter_definition": "1/e2",
                "emissions-0-divergence_rad": "1 mrad", "preview": "Preview"})
        elif route == "LSO home":
            await self.request(route, "GET", "/", account=self.accounts["lso session"])
        elif route == "evaluate (API)":
            await self.request(route, "POST", "/api/v1/evaluate/", account=self.accounts["user token"], json={
                "wavelength": f"{pick.choice([355, 532, 633, 1064, 1550])} nm", "power": f"{pick.randint(1, 500)} mW",
                "beam_diameter": "2 mm", "divergence": "0.8 mrad"})

    async def user(self) -> None:
        routes = [route for route in MIX if route not in self.without]
        weights = [MIX[route] for route in routes]
        while self.running():
            await self.act(self.random.choices(routes, weights)[0])
            await self.pause()

    async def pause(self) -> None:
        """A person's pause between two clicks: uniform around ``think`` seconds (0: none)."""
        if self.think:
            await asyncio.sleep(self.random.uniform(0.5, 1.5) * self.think)

    async def editor(self, number: int) -> None:
        """Read a laser, change its description with If-Match; after a 412, read again."""
        lso = self.accounts["lso token"]
        edits = 0
        while self.running():
            laser = self.edited[edits % len(self.edited)]
            read = await self.request("laser read (API)", "GET", f"/api/v1/lasers/{laser}/", account=lso)
            if read is None or read.status_code != 200:
                continue
            mark = f"e{number}.{edits}"
            change = await self.request(
                "laser edit (API)", "PATCH", f"/api/v1/lasers/{laser}/", account=lso, expected=(200, 412),
                headers={"If-Match": read.headers["ETag"]},
                json={"description": f"{read.json()['description']} {mark}".strip()[-9000:]})
            if change is not None and change.status_code == 200:
                self.acknowledged[laser].append(mark)
                edits += 1
            await self.pause()

    async def lost_updates(self) -> list[str]:
        """The changes answered 200 that the final descriptions do not hold."""
        lost = []
        for laser, marks in self.acknowledged.items():
            answer = await self.client.get(f"/api/v1/lasers/{laser}/", headers=self.accounts["lso token"].headers())
            words = set(answer.json()["description"].split())
            lost += [f"laser {laser}: {mark}" for mark in marks if mark not in words]
        return lost


def _percentile(values: list[float], point: int) -> float:
    if len(values) == 1:
        return values[0]
    return statistics.quantiles(values, n=100, method="inclusive")[point - 1]


def report(load: Load, lost: list[str], *, users: int) -> int:
    stats = load.stats
    elapsed = time.perf_counter() - stats.started
    answered = sum(len(values) for values in stats.latencies.values())
    print(f"\n{users} users pausing {load.think:g} s between requests (on average), {stats.sent} requests in {elapsed:.1f} s: {answered / elapsed:.1f} requests/s")
    print(f"{'route':<24} {'n':>6} {'p50 ms':>8} {'p95 ms':>8} {'p99 ms':>8}  statuses")
    for route in [*MIX, "laser read (API)", "laser edit (API)"]:
        values = stats.latencies.get(route)
        if not values:
            continue
        p50, p95, p99 = (_percentile(values, point) * 1000 for point in (50, 95, 99))
        statuses = ", ".join(f"{status}: {count}" for status, count in sorted(stats.statuses[route].items()))
        print(f"{route:<24} {len(values):>6} {p50:>8.0f} {p95:>8.0f} {p99:>8.0f}  {statuses}")
    server_errors = sum(count for counter in stats.statuses.values() for status, count in counter.items()
                        if status >= 500)
    print(f"errors: {len(stats.errors)} ({server_errors} of them 5xx)")
    for error in stats.errors[:20]:
        print(f"  {error}")
    print(f"edits acknowledged: {sum(len(marks) for marks in load.acknowledged.values())}; lost updates: {len(lost)}")
    for item in lost:
        print(f"  lost: {item}")
    for route in ("register page", "laser list (API)"):
        values = stats.latencies.get(route, [])
        if values:
            p95 = _percentile(values, 95) * 1000
            print(f"goal p95 < 300 ms, {route}: {p95:.0f} ms, {'met' if p95 < 300 else 'NOT met'}")
    return 1 if stats.errors or lost else 0


async def main_async(arguments: argparse.Namespace) -> int:
    limits = httpx.Limits(max_connections=arguments.users + 4)
    async with httpx.AsyncClient(base_url=arguments.base_url, timeout=arguments.timeout, limits=limits) as client:
        load = Load(client, budget=arguments.requests, deadline=0.0, seed=arguments.seed)
        load.without = set(arguments.without)
        load.think = arguments.think
        await load.prepare()
        load.stats = Stats()
        load.deadline = time.perf_counter() + arguments.duration
        editors = [load.editor(number) for number in range(min(EDITORS, arguments.users))]
        others = [load.user() for _ in range(arguments.users - len(editors))]
        await asyncio.gather(*editors, *others)
        lost = await load.lost_updates()
        return report(load, lost, users=arguments.users)


def main() -> None:
    parser = argparse.ArgumentParser(description="A bounded load test of a running register.")
    parser.add_argument("--base-url", default="http://127.0.0.1:8000", help="The server (default %(default)s).")
    parser.add_argument("--users", type=int, default=20, help="Concurrent virtual users (default 20; 3 of them edit).")
    parser.add_argument("--requests", type=int, default=3000, help="Stop after this many requests (default 3000).")
    parser.add_argument("--duration", type=float, default=180.0, help="Stop after this many seconds (default 180).")
    parser.add_argument("--timeout", type=float, default=60.0, help="Seconds one request may take (default 60).")
    parser.add_argument("--think", type=float, default=0.0,
                        help="Seconds each user pauses between requests, on average (default 0: back to back, "
                             "the server's throughput; a person at work pauses several seconds).")
    parser.add_argument("--seed", type=int, default=13, help="Seed of the random choices (default 13).")
    parser.add_argument("--without", action="append", default=[], choices=list(MIX),
                        help="Leave a route out of the mix (repeatable), to measure the others without it.")
    arguments = parser.parse_args()
    sys.exit(asyncio.run(main_async(arguments)))


if __name__ == "__main__":
    main()

"""The register's pages in a real browser, on the demo campus, as each role uses them.

Debian's chromium through Playwright's Python API against pytest-django's live server (the
``browser`` fixture of tests/registry/conftest.py). Screenshots of the main pages go to test-artifacts/screenshots/ (gitignored;
BROWSER_ARTIFACTS names another folder) for a person to look at.
"""
from __future__ import annotations

import math
import os
import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any
from urllib.parse import urlsplit

import pytest
from playwright.sync_api import Browser, Page, expect

from registry.models import Emission, HazardResult, Laser, LaserStatus, Location
from registry.services.campus import campus_load, campus_read
from tests.registry.browser_watch import watch

ARTIFACTS = Path(os.environ.get("BROWSER_ARTIFACTS", Path(__file__).resolve().parents[2] / "test-artifacts"))

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]



@pytest.fixture
def campus(live_server: Any) -> str:
    campus_load(data=campus_read(), set_demo_passwords=True)
    return str(live_server.url)


@pytest.fixture
def complaints() -> list[str]:
    return []


@pytest.fixture
def open_page(browser: Browser, campus: str, complaints: list[str]) -> Iterator[Any]:
    """open_page(username) -> a signed-in page; every request leaving the test server is refused and recorded,
    and a Content-Security-Policy violation, script error or console error fails the test."""
    contexts = []
    outside: list[str] = []

    def sign_in(username: str) -> Page:
        context = browser.new_context(viewport={"width": 1280, "height": 900})
        contexts.append(context)
        page = context.new_page()
        watch(page, complaints)
        local = urlsplit(campus).netloc
        page.route("**/*", lambda route: route.continue_() if urlsplit(route.request.url).netloc == local
                   else (outside.append(route.request.url), route.abort()))
        page.goto(f"{campus}/lasers/")
        # Anonymous: sent to sign in, then back where they were going.
        expect(page).to_have_url(re.compile(r"/login/\?next=/lasers/"))
        page.get_by_label("Username").fill(username)
        page.get_by_label("Password").fill(f"{username}-demo")
        page.get_by_role("button", name="Sign in").click()
        expect(page).to_have_url(f"{campus}/lasers/")
        return page

    yield sign_in
    for context in contexts:
        context.close()
    assert outside == []
    assert complaints == []


def _shot(page: Page, name: str) -> None:
    folder = ARTIFACTS / "screenshots"
    folder.mkdir(parents=True, exist_ok=True)
    page.screenshot(path=str(folder / f"{name}.png"), full_page=True)


def _fill_emission(page: Page, **values: str) -> None:
    for label, value in values.items():
        page.get_by_label(re.compile(f"^{label}")).fill(value)


def test_a_researcher_registers_a_laser_with_units_sees_the_preview_and_the_lso_approves_it(
        open_page: Any, campus: str) -> None:
    researcher = open_page("researcher")
    researcher.goto(f"{campus}/lasers/new/")
    proposed = researcher.get_by_label("Asset tag").input_value()
    assert proposed == "FV-0030"
    expect(researcher.get_by_label("Asset tag")).to_be_disabled()
    researcher.get_by_label("Manufacturer").fill("Tarrow Diodes")
    researcher.get_by_label("Model").fill("TD-2000")
    researcher.get_by_label("Type").select_option("diode")
    researcher.get_by_label("Labelled class").select_option("4")
    researcher.get_by_label("Room").select_option(label="Kestrel Building 0.12 (Ultrafast laser laboratory)")
    _fill_emission(researcher, **{"Wavelength": "808 nm", "Average power": "2 W", "Beam diameter at the aperture": "3 mm",
                                  "Full-angle divergence": "1 mrad"})
    researcher.get_by_label("Temporal mode").select_option("cw")

    # A bad value: an inline error naming the field, nothing saved.
    researcher.get_by_label("Pulse duration").fill("35 parsecs")
    researcher.get_by_role("button", name="Preview").click()
    expect(researcher.locator(".errorlist")).to_contain_text("pulse duration")
    _shot(researcher, "register-a-laser-error")
    assert not Laser.objects.filter(asset_tag=proposed).exists()

    researcher.get_by_label("Pulse duration").fill("")
    researcher.get_by_role("button", name="Preview").click()
    preview = researcher.locator("#preview")
    expect(preview).to_contain_text("NOHD")
    expect(preview).to_contain_text("Door sign")
    expect(preview).to_contain_text("Caution")
    _shot(researcher, "register-a-laser-preview")
    assert not Laser.objects.filter(asset_tag=proposed).exists()

    researcher.get_by_role("button", name="Submit for review").click()
    expect(researcher.locator(".messages")).to_contain_text("review queue")
    laser = Laser.objects.get(asset_tag=proposed)
    assert laser.status == LaserStatus.PENDING_REVIEW
    assert Emission.objects.get(laser=laser).average_power_W == pytest.approx(2.0)

    lso = open_page("lso")
    lso.goto(f"{campus}/review/")
    expect(lso.get_by_role("heading", name=re.compile(proposed))).to_be_visible()
    _shot(lso, "review-queue")
    lso.get_by_role("button", name=f"Approve {proposed}").click()
    expect(lso.locator(".messages")).to_contain_text(f"{proposed} is approved")
    laser.refresh_from_db()
    assert laser.status == LaserStatus.ACTIVE

    lso.goto(f"{campus}/lasers/?ordering=-nohd&status=active")
    tags = lso.locator("tbody tr td:first-child a").all_inner_texts()
    # Longest NOHD first (an unbounded one before any distance), ties by asset tag, read from the stored results.
    longest: dict[str, float] = {}
    for result in HazardResult.objects.filter(limits="icnirp2013", emission__laser__status=LaserStatus.ACTIVE):
        tag = result.emission.laser.asset_tag
        nohd = math.inf if result.nohd_unbounded else (result.nohd_m or 0.0)
        longest[tag] = max(longest.get(tag, 0.0), nohd)
    assert tags == sorted(longest, key=lambda tag: (-longest[tag], tag))
    assert proposed in tags
    _shot(lso, "register-by-nohd")


def test_an_inspector_reads_a_laser_page_and_finds_no_edit_control(open_page: Any, campus: str) -> None:
    inspector = open_page("inspector")
    laser = Laser.objects.get(asset_tag="FV-0005")
    inspector.goto(f"{campus}/lasers/{laser.pk}/")
    expect(inspector.get_by_role("heading", name=re.compile("FV-0005"))).to_be_visible()
    expect(inspector.get_by_role("note", name="Caution")).to_be_visible()
    expect(inspector.locator("table.figures").first).to_contain_text("NOHD")
    inspector.locator("summary").first.click()
    expect(inspector.locator("ol.working").first).to_be_visible()
    assert "(row " not in inspector.locator("ol.working").first.inner_text()
    # The only form on the page is signing out; no link leads to an edit.
    assert inspector.locator("main form").count() == 0
    assert inspector.get_by_role("link", name=re.compile("edit|back office", re.IGNORECASE)).count() == 0
    assert inspector.get_by_role("button", name=re.compile("approve|return|resubmit|save", re.IGNORECASE)).count() == 0
    for image in inspector.locator("figure.chart img").all():
        assert image.evaluate("element => element.naturalWidth") > 0
    _shot(inspector, "laser-page-inspector")
    inspector.goto(f"{campus}/")
    _shot(inspector, "home-inspector")
    inspector.get_by_role("link", name="Every room, page by page").click()
    expect(inspector).to_have_url(f"{campus}/locations/")
    expect(inspector.get_by_role("navigation", name="Pages")).to_contain_text("Page 1 of 1")
    _shot(inspector, "rooms")


def test_a_laser_user_sees_the_figures_and_eyewear_for_the_laser_they_are_authorized_on(
        open_page: Any, campus: str, complaints: list[str]) -> None:
    user = open_page("user")
    tags = user.locator("tbody tr td:first-child a").all_inner_texts()
    assert tags == ["FV-0001", "FV-0002"]
    user.goto(f"{campus}/")
    lasers = user.get_by_role("region", name="The lasers I may use: figures and eyewear")
    expect(lasers).to_contain_text("FV-0001")
    expect(lasers).to_contain_text("NOHD")
    expect(lasers).to_contain_text("517 m")
    expect(user.get_by_role("note", name="Caution")).to_be_visible()
    _shot(user, "home-laser-user")
    other = Laser.objects.get(asset_tag="FV-0005")
    response = user.goto(f"{campus}/lasers/{other.pk}/")
    assert response is not None and response.status == 404
    # The browser logs the refusal, as it does any 404.
    assert complaints == ["console error: Failed to load resource: the server responded with a status of 404 (Not Found)"]
    complaints.clear()


def test_the_room_page_flags_the_room_whose_goggles_are_inadequate(open_page: Any, campus: str) -> None:
    lso = open_page("lso")
    lso.goto(f"{campus}/")
    eyewear = lso.get_by_role("region", name=re.compile("Rooms whose eyewear is inadequate"))
    expect(eyewear).to_contain_text("Kestrel Building 0.12")
    _shot(lso, "home-lso")
    eyewear.get_by_role("link", name=re.compile(r"^All \d+ rooms?$")).click()
    expect(lso).to_have_url(f"{campus}/locations/?needs=eyewear")
    expect(lso.get_by_role("heading", level=1)).to_have_text("Rooms whose eyewear is inadequate")
    expect(lso.locator("table")).to_contain_text("Kestrel Building 0.12")
    _shot(lso, "rooms-eyewear-inadequate")
    lso.go_back()
    room = Location.objects.get(code="kes-0-12")
    eyewear.get_by_role("link", name=re.compile("Kestrel Building 0.12")).click()
    expect(lso).to_have_url(f"{campus}/locations/{room.pk}/")
    expect(lso.get_by_role("alert")).to_contain_text("Eyewear inadequate")
    matrix = lso.locator("table.matrix")
    expect(matrix).to_contain_text("EW-001")
    expect(matrix.locator("td.verdict-inadequate").first).to_contain_text("inadequate:")
    _shot(lso, "room-kes-0-12")
    lso.goto(f"{campus}/people/")
    _shot(lso, "people")
    # Jonah's request on FV-0001 waits while his general training has expired.
    lso.get_by_role("link", name="Jonah Pereira").click()
    expect(lso.get_by_role("region", name="Decide: FV-0001")).to_contain_text("has no valid general laser safety training")
    _shot(lso, "person-with-a-pending-request")


def test_the_lso_uploads_a_sheet_sees_the_dry_run_with_its_bad_rows_then_confirms_the_corrected_one(
        open_page: Any, campus: str, tmp_path: Path, settings: Any) -> None:
    settings.IMPORT_UPLOAD_DIR = tmp_path / "imports"
    header = "asset tag,laser type,class,status,building,room,owner,emission,mode,wavelength,average power,beam diameter,divergence"
    rows = ["MV-0001,diode,3B,active,Kestrel Building,1.07,researcher,main,cw,1.064 um,50 mW,2 mm,1 mrad",
            "",
            "MV-0002 ,solid state,4,active,Kestrel Building,0.12 ,researcher,fundamental,cw,1064 nm,2 W,3 mm,0.8 mrad",
            "mv-0002,solid state,3B,active,Kestrel Building,0.12,researcher,harmonic,cw,532 nm,500,3 mm,0.8 mrad"]
    messy = tmp_path / "moving-in.csv"
    messy.write_text("\n".join([header, *rows]) + "\n", encoding="utf-8")
    lso = open_page("lso")
    lso.get_by_role("link", name="Import from a spreadsheet").click()
    expect(lso.get_by_role("heading", name="Import lasers from a spreadsheet")).to_be_visible()
    lso.get_by_label("Spreadsheet (.csv or .xlsx)").set_input_files(str(messy))
    lso.get_by_role("button", name="Upload and see the dry run").click()
    expect(lso.get_by_role("alert")).to_contain_text("2 problems on 1 line: nothing can be imported.")
    problems = lso.locator("table#problems tbody tr")
    expect(problems).to_have_count(2)
    assert [cells.split("\t")[:2] for cells in problems.all_inner_texts()] == [["5", "average power"], ["5", "class"]]
    expect(lso.get_by_role("button", name=re.compile("^Import "))).to_have_count(0)
    _shot(lso, "import-dry-run-problems")
    assert not Laser.objects.filter(asset_tag__istartswith="MV-").exists()

    rows[3] = "mv-0002,solid state,4,active,Kestrel Building,0.12,researcher,harmonic,cw,532 nm,500 mW,3 mm,0.8 mrad"
    fixed = tmp_path / "moving-in-fixed.csv"
    fixed.write_text("\n".join([header, *rows]) + "\n", encoding="utf-8")
    lso.get_by_label("Spreadsheet (.csv or .xlsx)").set_input_files(str(fixed))
    lso.get_by_role("button", name="Upload and see the dry run").click()
    expect(lso.locator("#dry-run-summary")).to_contain_text("2 to create, 0 to update, 0 unchanged")
    outcomes = lso.locator("table#outcomes tbody tr")
    assert [cells.split("\t")[:3] for cells in outcomes.all_inner_texts()] == [
        ["MV-0001", "2", "create"], ["MV-0002", "4, 5", "create"]]
    _shot(lso, "import-dry-run")
    assert not Laser.objects.filter(asset_tag__istartswith="MV-").exists()

    lso.get_by_role("button", name="Import moving-in-fixed.csv").click()
    expect(lso).to_have_url(f"{campus}/lasers/")
    expect(lso.locator(".messages")).to_contain_text("moving-in-fixed.csv imported: lasers created 2")
    _shot(lso, "import-confirmed")
    assert sorted(Laser.objects.filter(asset_tag__istartswith="MV-").values_list("asset_tag", "status")) == [
        ("MV-0001", "active"), ("MV-0002", "active")]
    assert Emission.objects.filter(laser__asset_tag="MV-0002").count() == 2


def test_the_admin_and_the_browsable_api_work_under_the_sites_policy(open_page: Any, campus: str) -> None:
    lso = open_page("lso")
    laser = Laser.objects.get(asset_tag="FV-0005")
    lso.goto(f"{campus}/admin/registry/laser/?labelled_class__exact=4")
    expect(lso.locator("#result_list")).to_contain_text("FV-0005")
    # The admin's own scripts run: the select-all box ticks every row.
    lso.locator("#action-toggle").check()
    expect(lso.locator(".action-counter")).to_contain_text("selected")
    lso.goto(f"{campus}/admin/registry/laser/{laser.pk}/change/")
    expect(lso.locator("#emissions-group")).to_be_visible()
    # The owner field's autocomplete widget is drawn by the admin's select2 script.
    lso.locator("#laser_form .select2-selection").first.click()
    expect(lso.locator(".select2-results")).to_be_visible()
    _shot(lso, "admin-laser")
    lso.goto(f"{campus}/api/v1/lasers/{laser.pk}/")
    expect(lso.locator(".response-info")).to_contain_text("FV-0005")
    _shot(lso, "browsable-api-laser")

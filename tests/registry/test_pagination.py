"""The register's paginator: the same pages as an OFFSET over the joined rows, in one query each."""
from __future__ import annotations

import pytest
from django.core.paginator import Paginator
from django.db import connection
from django.test.utils import CaptureQueriesContext

from registry import selectors
from registry.models import Person
from registry.pagination import KeysFirstPaginator
from tests import factories

pytestmark = pytest.mark.django_db


@pytest.fixture
def register() -> None:
    rooms = [factories.LocationFactory.create(room=f"R{number}") for number in range(3)]
    owners = [factories.PersonFactory.create(role="researcher") for _ in range(3)]
    for number in range(23):
        laser = factories.LaserFactory.create(location=rooms[number % 3], owner=owners[number % 2],
                                              status="in_storage" if number % 3 == 0 else "active")
        emission = factories.EmissionFactory.create(laser=laser)
        if number % 4:
            # Equal figures on several lasers, and some lasers without any: ties and nulls to order.
            factories.HazardResultFactory.create(emission=emission, limits="icnirp2013", nohd_m=float(number % 5),
                                                 od_required=float(number % 3))


@pytest.mark.parametrize("ordering", ["asset_tag", "-asset_tag", "status", "location", "-owner", "nohd", "-nohd", "od"])
def test_each_page_holds_the_rows_of_an_offset_in_the_same_order(register: None, ordering: str) -> None:
    lasers = selectors.laser_register(ordering=ordering).order_by(*selectors.register_ordering(ordering))
    for number in (1, 2, 3):
        expected = [laser.pk for laser in Paginator(lasers, 10).page(number)]
        with CaptureQueriesContext(connection) as queries:
            page = KeysFirstPaginator(lasers, 10).page(number)
            shown = [laser.pk for laser in page]
        assert shown == expected
        # The count (once per paginator), then the page's lasers with their emissions and results.
        assert len(queries) == 4
        assert (page.start_index(), page.end_index()) == (Paginator(lasers, 10).page(number).start_index(),
                                                          Paginator(lasers, 10).page(number).end_index())


def test_a_distinct_queryset_filtered_over_many_rows_pages_like_an_offset(register: None) -> None:
    # Each owner of an active laser once, in the order of a related table's column.
    owners = Person.objects.filter(lasers__status="active").distinct().order_by("user__username")
    for number in (1, 2):
        assert list(KeysFirstPaginator(owners, 1).page(number)) == list(Paginator(owners, 1).page(number))


def test_an_order_with_ties_is_completed_by_the_key_so_that_each_row_is_on_one_page(register: None) -> None:
    lasers = selectors.laser_list().order_by("-status")
    pages = [[laser.pk for laser in KeysFirstPaginator(lasers, 10).page(number)] for number in (1, 2, 3)]
    assert [pk for page in pages for pk in page] == list(lasers.order_by("-status", "pk").values_list("pk", flat=True))
    # The model's own order (Laser.Meta: asset_tag) is kept when none is asked for.
    assert [laser.pk for laser in KeysFirstPaginator(selectors.laser_list(), 50).page(1)] == list(
        selectors.laser_list().order_by("asset_tag").values_list("pk", flat=True))


def test_a_list_is_sliced() -> None:
    assert list(KeysFirstPaginator(list(range(25)), 10).page(3)) == [20, 21, 22, 23, 24]

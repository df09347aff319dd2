"""The committed migrations describe the models exactly."""
from __future__ import annotations

from io import StringIO

import pytest
from django.core.management import call_command


@pytest.mark.django_db  # makemigrations reads the migration history table
def test_the_models_need_no_migration_that_is_not_committed() -> None:
    output = StringIO()
    # --check exits non-zero (SystemExit) when a model change has no migration.
    call_command("makemigrations", "--check", "--dry-run", stdout=output)
    assert "No changes detected" in output.getvalue()

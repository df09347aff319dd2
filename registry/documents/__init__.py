"""Printed evidence from the live register: door signs, equipment labels, audit reports and
pre-audit packs. ``content`` reads what each document says; ``pdf`` renders it from
``templates/pdf/<name>.html`` with WeasyPrint. The audit report's JSON is
``registry.serializers.reports``, read from the same content."""
from __future__ import annotations

from registry.documents.pdf import (
    Document,
    Paper,
    Pdf,
    render_audit_report,
    render_door_sign,
    render_laser_label,
    render_pre_audit_pack,
)

__all__ = ["Document", "Paper", "Pdf", "render_audit_report", "render_door_sign", "render_laser_label",
           "render_pre_audit_pack"]
